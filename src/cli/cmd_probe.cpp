// `heraldry probe SCENARIO [--at METRES] [--json] [--set PROTOCOL:AXIS=VALUE]`: every protocol's
// figures at one distance. A swept parameter takes its first value unless --set pins it.
#include <cmath>
#include <cstdio>
#include <string>

#include "cli/commands.hpp"
#include "cli/json.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::cli {

namespace {

// Applies one --set "PROTOCOL:AXIS=VALUE" to the plan (the axis keeps only that value).
void apply_set(sweep::Plan& plan, const std::string& text) {
  const auto colon = text.find(':');
  const auto eq = text.rfind('=');
  if (colon == std::string::npos || eq == std::string::npos || eq < colon)
    throw InputError("--set", 0, "--set", "\"" + text + "\"", "PROTOCOL:AXIS=VALUE, e.g. \"subtract both:step3.transmissivity=0.9\"");
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

}  // namespace

int cmd_probe(const ProbeOptions& options) {
  const scenario::Scenario sc = scenario::load(options.scenario);
  const double d = options.at_m ? *options.at_m : sc.link.target_m;
  if (!(d >= 0.0) || !std::isfinite(d))
    throw InputError("--at", 0, "--at", json_number(d), "a distance in metres >= 0");
  sweep::Plan plan = sweep::make_plan(sc);
  for (const auto& s : options.set) apply_set(plan, s);

  const auto bare = point::bare_state(sweep::source_of(sc), sc.link.model, d);

  struct Row {
    std::string name;
    point::PointResult r;
  };
  std::vector<Row> rows;
  bool failed = false;
  for (std::size_t p = 0; p < plan.protocols.size(); ++p) {
    const std::vector<std::size_t> idx(plan.protocols[p].axes.size(), 0);
    const point::PointResult r = point::evaluate(sweep::resolve(sc, plan, p, idx, d));
    rows.push_back({plan.protocols[p].name, r});
    failed = failed || r.status != Status::ok;
  }

  if (options.json) {
    std::string out = "{\"distance_m\": " + json_number(d) + ", \"input\": {\"negativity\": " +
                      json_number(gaussian::negativity(bare)) + ", \"log_negativity\": " +
                      json_number(gaussian::log_negativity(bare)) + ", \"fidelity\": " +
                      json_number(gaussian::fidelity(bare)) + "}, \"protocols\": [";
    for (std::size_t i = 0; i < rows.size(); ++i)
      out += std::string(i ? ", " : "") + "{\"name\": " + json_string(rows[i].name) + ", " +
             json_fields(rows[i].r) + "}";
    out += "]}\n";
    std::fputs(out.c_str(), stdout);
  } else {
    std::printf("# %s at %.6g m\n", sc.title.c_str(), d);
    std::printf("# bare link (Gaussian): E_N %.6f ebit, negativity %.6f, fidelity %.6f\n",
                gaussian::log_negativity(bare), gaussian::negativity(bare), gaussian::fidelity(bare));
    std::printf("%-24s %12s %10s %10s %10s %12s %8s %7s %10s  %s\n", "protocol", "P_success", "E_N", "negativity",
                "fidelity", "rate_Hz", "false%", "cutoff", "trunc_err", "status");
    for (const auto& [name, r] : rows)
      std::printf("%-24.24s %12.6g %10.6f %10.6f %10.6f %12.6g %8.3f %7d %10.2e  %s\n", name.c_str(),
                  r.success_probability, r.log_negativity, r.negativity, r.fidelity, r.heralding_rate_hz,
                  100.0 * r.false_herald_fraction, r.cutoff, r.truncation_error, to_string(r.status));
  }
  return failed ? 3 : 0;
}

}  // namespace heraldry::cli
