// One distance, every protocol: the evaluation behind `heraldry probe` and the Python module's
// probe(). A swept parameter takes its first value unless a pin "PROTOCOL:AXIS=VALUE" fixes it.
#include <cmath>
#include <cstdio>
#include <stdexcept>
#include <string>

#include "heraldry/sweep.hpp"

namespace heraldry::sweep {

namespace {

std::string number_text(double x) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", x);
  return buf;
}

}  // namespace

void pin(Plan& plan, std::string_view setting) {
  const std::string text(setting);
  const auto eq = text.rfind('=');
  // The protocol's name may hold ':' itself; an axis name never does.
  const auto colon = eq == std::string::npos ? text.rfind(':') : text.rfind(':', eq);
  if (colon == std::string::npos || eq == std::string::npos || eq < colon)
    throw InputError("--set", 0, "--set", "\"" + text + "\"",
                     "PROTOCOL:AXIS=VALUE, e.g. \"subtract both:tap_b.transmissivity=0.9\"");
  const std::string proto = text.substr(0, colon), axis = text.substr(colon + 1, eq - colon - 1);
  double value = 0.0;
  try {
    std::size_t used = 0;
    value = std::stod(text.substr(eq + 1), &used);
    if (used != text.size() - eq - 1) throw std::invalid_argument("trailing");
  } catch (const std::exception&) {
    throw InputError("--set", 0, "--set", "\"" + text + "\"", "a number after '='");
  }
  for (auto& pp : plan.protocols) {
    if (pp.name != proto) continue;
    for (std::size_t a = 1; a < pp.axes.size(); ++a)
      if (pp.axes[a].name == axis) {
        pp.axes[a].values = {value};
        return;
      }
    std::string known;
    for (std::size_t a = 1; a < pp.axes.size(); ++a) known += (known.empty() ? "" : ", ") + pp.axes[a].name;
    throw InputError("--set", 0, "--set", "\"" + text + "\"",
                     "a swept parameter of protocol '" + proto + "'" + (known.empty() ? " (it has none)" : ": " + known));
  }
  throw InputError("--set", 0, "--set", "\"" + text + "\"", "the name of a protocol of the scenario");
}

Probe probe(const scenario::Scenario& sc, std::optional<double> at_m, std::span<const std::string> pins) {
  const double d = at_m ? *at_m : sc.link.target_m;
  if (!(d >= 0.0) || !std::isfinite(d)) throw InputError("--at", 0, "--at", number_text(d), "a distance in metres >= 0");
  Plan plan = make_plan(sc);
  for (const auto& s : pins) pin(plan, s);
  Probe out;
  out.distance_m = d;
  out.link = point::link_point(source_of(sc), sc.link.model, d);
  for (std::size_t p = 0; p < plan.protocols.size(); ++p) {
    const std::vector<std::size_t> idx(plan.protocols[p].axes.size(), 0);
    out.protocols.push_back({plan.protocols[p].name, evaluate_point(sc, plan, p, idx, d)});
  }
  return out;
}

}  // namespace heraldry::sweep
