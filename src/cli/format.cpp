// The verdict as a terminal table plus one line per protocol in words.
#include <cstdio>
#include <sstream>
#include <string>

#include "cli/commands.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::cli {

namespace {

std::string describe_crossing(const Crossing& c) {
  char buf[64];
  switch (c.kind) {
    case Crossing::Kind::crossed: std::snprintf(buf, sizeof buf, "%.4g m", c.distance); break;
    case Crossing::Kind::never_positive: std::snprintf(buf, sizeof buf, "never"); break;
    case Crossing::Kind::beyond_grid: std::snprintf(buf, sizeof buf, "> %.4g m", c.distance); break;
    case Crossing::Kind::never_crosses: std::snprintf(buf, sizeof buf, "never breaks (pure loss)"); break;
  }
  return buf;
}

}  // namespace

std::string format_verdict(const scenario::Scenario& sc, const verdict::Verdict& v) {
  std::ostringstream out;
  char buf[1024];
  if (v.measured) {
    std::snprintf(buf, sizeof buf, "Verdict for the measured link (%s)\n", sc.title.c_str());
    out << buf;
    std::snprintf(buf, sizeof buf, "  bare link: E_N %.4f ebit, fidelity %.4f%s\n", v.bare_log_negativity, v.bare_fidelity,
                  v.bare_log_negativity > 0.0 ? "" : "; separable: no local stage can restore entanglement");
  } else {
    std::snprintf(buf, sizeof buf, "Verdict at the target distance %.4g m (%s)\n", v.target_m, sc.title.c_str());
    out << buf;
    std::snprintf(buf, sizeof buf, "  bare link: E_N %.4f ebit, fidelity %.4f; entanglement survives to %s, fidelity > 1/2 to %s\n",
                  v.bare_log_negativity, v.bare_fidelity,
                  v.survival.kind == Crossing::Kind::never_positive ? "no distance of the grid"
                                                                    : describe_crossing(v.survival).c_str(),
                  v.fidelity_half.kind == Crossing::Kind::never_positive ? "no distance of the grid"
                                                                         : describe_crossing(v.fidelity_half).c_str());
  }
  out << buf;
  // Swept source or link hardware: the lines above and the file's /gaussian and /link hold the
  // first value of each; every protocol below is compared with the bare link of its own setting.
  std::string first_values;
  for (const auto& st : sc.settings) {
    if (!st.counter.empty() || st.values.empty()) continue;
    char one[160];
    std::snprintf(one, sizeof one, "%s%s = %g", first_values.empty() ? "" : ", ", st.name.c_str(), st.values.front());
    first_values += one;
  }
  if (!first_values.empty())
    out << "  (the bare link above is that of the first value of the swept hardware: " << first_values
        << "; each protocol below is compared with the bare link of its own best setting)\n";
  if (!v.measured && v.survival.kind == Crossing::Kind::crossed) {
    std::snprintf(buf, sizeof buf,
                  "  beyond %.4g m the link's state is separable: no local stage (subtraction, addition, amplifier, "
                  "scissors) can restore entanglement there; those points are exact results (E_N = 0)\n",
                  v.survival.distance);
    out << buf;
  } else if (!v.measured && v.survival.kind == Crossing::Kind::never_positive) {
    out << "  the link's state is separable over the whole grid" << (first_values.empty() ? "" : " (at that setting)")
        << ": no local stage can restore entanglement there\n";
  }
  if (const std::string caution = antenna_caution(sc); !caution.empty()) out << "  " << caution << "\n";
  if (v.relay_log_negativity)
    out << "  midpoint relay (Gaussian entanglement swapping, ideal Bell measurement): E_N "
        << std::to_string(*v.relay_log_negativity).substr(0, 6) << " ebit, fidelity "
        << std::to_string(*v.relay_fidelity).substr(0, 6) << "\n";
  std::snprintf(buf, sizeof buf, "  %-22s %11s %11s %8s %8s %8s %13s %13s %11s\n", "protocol", "P_success", "rate_Hz",
                "false%", "E_N", "F", "break-even E_N", "break-even F", "F > 1/2 to");
  out << buf;
  for (const auto& p : v.protocols) {
    const point::PointResult& r = p.at_target;
    // Distances mean nothing on one measured link.
    const std::string en = v.measured ? "-" : describe_crossing(p.breakeven_log_negativity);
    const std::string f = v.measured ? "-" : describe_crossing(p.breakeven_fidelity);
    const std::string half = v.measured ? "-" : describe_crossing(p.fidelity_half);
    std::snprintf(buf, sizeof buf, "  %-22.22s %11.4g %11.4g %8.2f %8.4f %8.4f %13s %13s %11s\n", p.name.c_str(),
                  r.success_probability, r.heralding_rate_hz, 100.0 * r.false_herald_fraction, r.log_negativity,
                  r.fidelity, en.c_str(), f.c_str(), half.c_str());
    out << buf;
  }
  for (const auto& p : v.protocols) {
    out << "  " << p.name << ": " << p.summary;
    if (!p.best.empty()) {
      out << "; best setting:";
      for (const auto& [name, value] : p.best) {
        std::snprintf(buf, sizeof buf, " %s = %.4g", name.c_str(), value);
        out << buf;
      }
    }
    if (p.seconds_for_heralds) {
      std::snprintf(buf, sizeof buf, "; %.4g s for %.4g heralded pairs", *p.seconds_for_heralds, *sc.output.heralds_wanted);
      out << buf;
    }
    if (p.breakeven_relay_log_negativity)
      out << "; break-even with the Gaussian relay: E_N " << describe_crossing(*p.breakeven_relay_log_negativity)
          << ", F " << describe_crossing(*p.breakeven_relay_fidelity);
    if (p.failed_points) out << "; " << p.failed_points << " grid points failed (see status in the file)";
    out << "\n";
  }
  // Two swept parameters (e.g. a counter's efficiency and dark rate): the map of the E_N gain
  // over the bare link at the target, '+' where the stage pays off.
  for (const auto& p : v.protocols) {
    if (p.slice_shape.size() != 2) continue;
    const std::size_t rows = p.slice_shape[0], cols = p.slice_shape[1];
    const sweep::Plan plan = sweep::make_plan(sc);
    const sweep::ProtocolPlan* pp = nullptr;
    for (const auto& q : plan.protocols)
      if (q.name == p.name) pp = &q;
    if (!pp) continue;
    std::ostringstream place;
    place.precision(6);
    if (v.measured)
      place << "on the measured link";
    else
      place << "at " << v.target_m << " m";
    out << "  " << p.name << ": E_N gain over the bare link " << place.str() << " (rows " << p.slice_axes[0]
        << ", columns " << p.slice_axes[1] << "; * pays off)\n";
    std::snprintf(buf, sizeof buf, "  %12s", "");
    out << buf;
    for (std::size_t j = 0; j < cols; ++j) {
      std::snprintf(buf, sizeof buf, " %10.3g", pp->axes[2].values[j]);
      out << buf;
    }
    out << "\n";
    for (std::size_t i = 0; i < rows; ++i) {
      std::snprintf(buf, sizeof buf, "  %12.4g", pp->axes[1].values[i]);
      out << buf;
      for (std::size_t j = 0; j < cols; ++j) {
        const std::size_t k = i * cols + j;
        if (!has_figures(p.slice[k].status)) {
          std::snprintf(buf, sizeof buf, " %10s", "failed");
        } else {
          const double gain = p.slice[k].log_negativity - p.slice_bare_log_negativity[k];
          std::snprintf(buf, sizeof buf, " %+9.3f%c", gain, gain > 0.0 ? '*' : ' ');
        }
        out << buf;
      }
      out << "\n";
    }
  }
  return out.str();
}

}  // namespace heraldry::cli
