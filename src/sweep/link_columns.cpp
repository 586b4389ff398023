// The bare link's table column by column: `heraldry link` (text and --json) and the Python
// module's link() print or return these same columns.
#include <string>
#include <vector>

#include "heraldry/link.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::sweep {

std::vector<LinkColumn> link_columns(const scenario::Scenario& sc) {
  const link::LinkModel& model = sc.link.model;
  const point::Source source = source_of(sc);
  const bool measured = sc.link.measured();
  std::vector<LinkColumn> cols = {
      {"distance_m", "m", "distance", 10, "%10.4g", {}},
      {"beam_dB", "dB", "beam spreading between the dishes", 9, "%9.3g", {}},
      {"air_dB", "dB", "gas absorption (ITU-R P.676 or the fixed dB/km)", 9, "%9.3g", {}},
      {"rain_dB", "dB", "rain attenuation (ITU-R P.838)", 9, "%9.3g", {}},
      {"iface_dB", "dB", "cryostat/air interfaces", 9, "%9.3g", {}},
      {"spill_dB", "dB", "antenna spillover", 9, "%9.3g", {}},
      {"ohmic_dB", "dB", "antenna ohmic loss", 9, "%9.3g", {}},
      {"match_dB", "dB", "antenna mismatch", 9, "%9.3g", {}},
      {measured ? "meas_dB" : "line_dB", "dB", measured ? "measured channel (cause unknown)" : "cryogenic line", 9,
       "%9.3g", {}},
      {"tau_a", "1", "transmissivity of mode a's path", 11, "%11.8f", {}},
      {"noise_a", "photons", "thermal photons added to mode a, (1 - tau) n_E", 10, "%10.4g", {}},
      {"tau_b", "1", "transmissivity of mode b's path", 11, "%11.8f", {}},
      {"noise_b", "photons", "thermal photons added to mode b, (1 - tau) n_E", 10, "%10.4g", {}},
      {"spill_n", "photons", "of noise_b: photons the antennas' spillover adds", 9, "%9.3g", {}},
      {"ohmic_n", "photons", "of noise_b: photons the antennas' ohmic loss adds", 9, "%9.3g", {}},
      {"match_n", "photons", "of noise_b: photons the antennas' mismatch adds", 9, "%9.3g", {}},
      {"E_N", "ebit", "log-negativity of the bare link's Gaussian state", 9, "%9.5f", {}},
      {"fidelity", "1", "Braunstein-Kimble teleportation fidelity of the bare link's state", 9, "%9.5f", {}},
      {"PLOB", "ebit", "two-way capacity bound of the link (Pirandola et al. 2017; infinite when lossless)", 9,
       "%9.4g", {}},
  };
  for (double d : sc.link.distances_m) {
    const point::LinkPoint p = point::link_point(source, model, d);
    const link::LinkBudget& b = p.budget;
    const auto& l = b.b.loss;
    const auto& n = b.b.noise;
    const double row[] = {d,
                          l.beam_db,
                          l.air_db,
                          l.rain_db,
                          l.interface_db,
                          l.spillover_db,
                          l.ohmic_db,
                          l.mismatch_db,
                          measured ? l.direct_db : l.line_db,
                          b.a.channel.transmissivity,
                          (1.0 - b.a.channel.transmissivity) * b.a.channel.bath_photons,
                          b.b.channel.transmissivity,
                          (1.0 - b.b.channel.transmissivity) * b.b.channel.bath_photons,
                          n.spillover,
                          n.ohmic,
                          n.mismatch,
                          p.log_negativity,
                          p.fidelity,
                          p.plob_ebits};
    static_assert(sizeof row / sizeof row[0] == 19);
    for (std::size_t c = 0; c < cols.size(); ++c) cols[c].values.push_back(row[c]);
  }
  return cols;
}

}  // namespace heraldry::sweep
