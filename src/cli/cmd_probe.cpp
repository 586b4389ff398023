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

int cmd_probe(const ProbeOptions& options) {
  const scenario::Scenario sc = scenario::load(options.scenario);
  const sweep::Probe pr = sweep::probe(sc, options.at_m, options.set);
  const double d = pr.distance_m;
  const point::LinkPoint& bare = pr.link;
  bool failed = false;
  for (const auto& row : pr.protocols) failed = failed || !has_figures(row.result.status);

  if (options.json) {
    std::string out = "{\"distance_m\": " + json_number(d) + ", \"input\": {\"negativity\": " +
                      json_number(bare.negativity) + ", \"log_negativity\": " + json_number(bare.log_negativity) +
                      ", \"fidelity\": " + json_number(bare.fidelity) + "}, \"protocols\": [";
    for (std::size_t i = 0; i < pr.protocols.size(); ++i)
      out += std::string(i ? ", " : "") + "{\"name\": " + json_string(pr.protocols[i].name) + ", " +
             json_fields(pr.protocols[i].result) + "}";
    out += "]}\n";
    std::fputs(out.c_str(), stdout);
  } else {
    std::printf("# %s at %.6g m\n", sc.title.c_str(), d);
    std::printf("# bare link (Gaussian): E_N %.6f ebit, negativity %.6f, fidelity %.6f\n",
                bare.log_negativity, bare.negativity, bare.fidelity);
    std::printf("%-24s %12s %10s %10s %10s %12s %8s %7s %10s  %s\n", "protocol", "P_success", "E_N", "negativity",
                "fidelity", "rate_Hz", "false%", "cutoff", "trunc_err", "status");
    for (const auto& [name, r] : pr.protocols)
      std::printf("%-24.24s %12.6g %10.6f %10.6f %10.6f %12.6g %8.3f %7d %10.2e  %s\n", name.c_str(),
                  r.success_probability, r.log_negativity, r.negativity, r.fidelity, r.heralding_rate_hz,
                  100.0 * r.false_herald_fraction, r.cutoff, r.truncation_error, to_string(r.status));
  }
  return failed ? 3 : 0;
}

}  // namespace heraldry::cli
