// `heraldry link SCENARIO`: the link budget and the Gaussian (no distillation) figures versus
// distance, with the distances where entanglement and fidelity above 1/2 end.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <vector>

#include "cli/commands.hpp"
#include "heraldry/crossing.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::cli {

namespace {

void print_crossing(const char* what, const Crossing& c) {
  switch (c.kind) {
    case Crossing::Kind::crossed: std::printf("%s: %.4g m\n", what, c.distance); break;
    case Crossing::Kind::never_positive:
      std::printf("%s: none on the grid (already lost at %.4g m)\n", what, c.distance);
      break;
    case Crossing::Kind::beyond_grid:
      std::printf("%s: beyond %.4g m\n", what, c.distance);
      break;
    case Crossing::Kind::never_crosses:
      std::printf("%s: every distance (pure loss never breaks entanglement)\n", what);
      break;
  }
}

}  // namespace

std::string antenna_caution(const scenario::Scenario& sc) {
  const auto& m = sc.link.model;
  if (m.direct || m.medium != link::Medium::air || !(m.antenna || m.source_antenna)) return {};
  if (!link::uses_ideal_antennas(m)) return {};
  return "caution: " + link::ideal_antenna_caution() +
         " (typical magnitudes: common practice and from memory; give your antennas' spillover_loss, "
         "ohmic_loss_db and return_loss_db in [link.antenna])";
}

int cmd_link(const std::string& path) {
  const scenario::Scenario sc = scenario::load(path);
  const auto& model = sc.link.model;
  const auto& grid = sc.link.distances_m;
  const point::Source source = sweep::source_of(sc);
  const bool measured = sc.link.measured();

  std::printf("# %s\n", sc.title.c_str());
  std::string source_text;
  char buf[256];
  if (sc.source.given_as == "covariance") {
    source_text = "a measured covariance matrix";
  } else {
    std::snprintf(buf, sizeof buf, "squeezing %.3g dB, %.3g thermal photons", squeezing_db_from_parameter(sc.source.squeezing_r),
                  sc.source.thermal_photons);
    source_text = buf;
  }
  std::string carriers;
  if (sc.source.frequency_a_hz || sc.source.frequency_b_hz) {
    std::snprintf(buf, sizeof buf, "%.4g GHz (mode a) and %.4g GHz (mode b)",
                  link::mode_frequency_hz(model, Mode::A) * 1e-9, link::mode_frequency_hz(model, Mode::B) * 1e-9);
    carriers = buf;
  } else {
    std::snprintf(buf, sizeof buf, "%.4g GHz", sc.source.frequency_hz * 1e-9);
    carriers = buf;
  }
  if (measured)
    std::printf("# %s, %s at the source; one measured link (the [link.direct] channels, no distance axis)\n",
                carriers.c_str(), source_text.c_str());
  else
    std::printf("# %s, %s at the source; %s, %s\n", carriers.c_str(), source_text.c_str(),
                model.medium == link::Medium::air ? "open air" : "cryogenic line",
                model.geometry == link::Geometry::one_way ? "one-way (a stays, b travels)"
                                                           : "midpoint (each mode travels d/2)");
  if (const std::string caution = antenna_caution(sc); !caution.empty()) std::printf("# %s\n", caution.c_str());
  if (!sc.settings.empty()) {
    std::string names;
    for (const auto& st : sc.settings) names += (names.empty() ? "" : ", ") + st.name;
    std::printf("# swept hardware (%s) at its first value here; `heraldry run` sweeps it\n", names.c_str());
  }
  std::printf("# loss in dB of the travelling mode %s by cause; noise = thermal photons added, (1 - tau) n_E;\n"
              "# spill_n, ohmic_n, match_n: the photons the antennas' spillover, ohmic and mismatch losses add to it\n",
              model.geometry == link::Geometry::one_way ? "b" : "(per arm)");
  std::printf("%10s %9s %9s %9s %9s %9s %9s %9s %9s %11s %10s %11s %10s %9s %9s %9s %9s %9s %9s\n", "distance_m",
              "beam_dB", "air_dB", "rain_dB", "iface_dB", "spill_dB", "ohmic_dB", "match_dB", measured ? "meas_dB" : "line_dB", "tau_a",
              "noise_a", "tau_b", "noise_b", "spill_n", "ohmic_n", "match_n", "E_N", "fidelity", "PLOB");
  for (double d : grid) {
    const point::LinkPoint p = point::link_point(source, model, d);
    const link::LinkBudget& b = p.budget;
    const auto& l = b.b.loss;
    const auto& n = b.b.noise;
    const double na = (1.0 - b.a.channel.transmissivity) * b.a.channel.bath_photons;
    const double nb = (1.0 - b.b.channel.transmissivity) * b.b.channel.bath_photons;
    char where[16];
    if (measured)
      std::snprintf(where, sizeof where, "%10s", "measured");
    else
      std::snprintf(where, sizeof where, "%10.4g", d);
    std::printf("%s %9.3g %9.3g %9.3g %9.3g %9.3g %9.3g %9.3g %9.3g %11.8f %10.4g %11.8f %10.4g %9.3g %9.3g %9.3g %9.5f %9.5f %9.4g\n",
                where, l.beam_db, l.air_db, l.rain_db, l.interface_db, l.spillover_db, l.ohmic_db, l.mismatch_db,
                measured ? l.direct_db : l.line_db, b.a.channel.transmissivity, na, b.b.channel.transmissivity, nb, n.spillover,
                n.ohmic, n.mismatch, p.log_negativity, p.fidelity, p.plob_ebits);
  }
  if (measured) {
    const point::LinkPoint p = point::link_point(source, model, 0.0);
    std::printf("the measured link %s (E_N %.6g ebit); teleportation fidelity %.6g %s the classical 1/2\n",
                p.log_negativity > 0.0 ? "keeps entanglement" : "is separable: no local stage can restore entanglement",
                p.log_negativity, p.fidelity, p.fidelity > 0.5 ? "beats" : "does not beat");
  } else if (grid.size() > 1) {
    const point::BareCrossings c = point::bare_crossings(source, model, grid);
    print_crossing("entanglement survives (E_N > 0) up to", c.survival);
    print_crossing("teleportation beats the classical 1/2 up to", c.fidelity_half);
    if (c.survival.kind == Crossing::Kind::crossed || c.survival.kind == Crossing::Kind::never_positive)
      std::printf("beyond the survival distance the link's state is separable: no local stage (tap, addition, "
                  "amplifier, scissors) can restore entanglement there\n");
  }
  return 0;
}

int cmd_example() {
  const auto text = scenario::demo_text();
  std::fwrite(text.data(), 1, text.size(), stdout);
  return 0;
}

int cmd_check(const std::string& path) {
  const scenario::Scenario sc = scenario::load(path);
  const auto& grid = sc.link.distances_m;
  std::printf("%s: valid scenario \"%s\"\n", sc.path.c_str(), sc.title.c_str());
  std::printf("  distances: %zu (%.4g m to %.4g m), target %.4g m\n", grid.size(), grid.front(), grid.back(),
              sc.link.target_m);
  const sweep::Plan plan = sweep::make_plan(sc);
  for (const auto& pp : plan.protocols) {
    std::printf("  protocol \"%s\": %zu points", pp.name.c_str(), pp.size());
    for (std::size_t a = 1; a < pp.axes.size(); ++a)
      std::printf("%s %s (%zu values)", a == 1 ? "; swept:" : ",", pp.axes[a].name.c_str(), pp.axes[a].values.size());
    std::printf("\n");
  }
  std::printf("  total: %zu points\n", plan.total_points());

  // The checks run makes before any work (the same function: check and run agree), and the
  // cutoff the bare link's state needs at each distance (Gaussian estimate; heralded states
  // have heavier tails and need more, which the run finds itself).
  const Preflight pf = preflight(sc);
  const point::Numerics numerics = sweep::numerics_of(sc);
  const double tol = numerics.tolerance;
  const int max_cutoff = sc.numerics.max_cutoff;
  auto cutoff_text = [&](int n) { return n > max_cutoff ? "more than " + std::to_string(max_cutoff) : std::to_string(n); };
  const std::string range = pf.cutoff_lo == pf.cutoff_hi ? cutoff_text(pf.cutoff_hi)
                                                        : cutoff_text(pf.cutoff_lo) + ".." + cutoff_text(pf.cutoff_hi);
  const std::string surveyed =
      pf.survey_distances < grid.size() ? " (at " + std::to_string(pf.survey_distances) + " of the distances)" : "";
  if (sc.numerics.cutoff > 0) {
    std::printf("  cutoff: fixed at %d (the bare link needs %s for tolerance %.3g%s)\n", sc.numerics.cutoff,
                range.c_str(), tol, surveyed.c_str());
  } else {
    std::printf("  cutoff: auto; the bare link needs %s for tolerance %.3g (largest at %.4g m, %s per state)%s;\n"
                "          heralded states need more; the run stops at max_cutoff = %d\n",
                range.c_str(), tol, pf.cutoff_at_m,
                mebibytes(fock::memory_bytes_for(numerics.engine, std::min(pf.cutoff_hi, max_cutoff))).c_str(),
                surveyed.c_str(), max_cutoff);
    if (pf.cutoff_hi > max_cutoff)
      std::printf("  warning: points where the bare link needs more than max_cutoff = %d will miss the tolerance "
                  "(exit code 3)\n",
                  max_cutoff);
  }
  for (const std::string& w : pf.warnings) std::printf("  warning: %s\n", w.c_str());
  return 0;
}

}  // namespace heraldry::cli
