// `heraldry probe SCENARIO [--at METRES] [--json]`: every protocol's figures at one distance.
#include <cstdio>

#include "cli/commands.hpp"
#include "heraldry/scenario.hpp"

namespace heraldry::cli {

int cmd_probe(const ProbeOptions& options) {
  const scenario::Scenario sc = scenario::load(options.scenario);
  (void)sc;
  std::fprintf(stderr, "heraldry probe: not available in this build yet\n");
  return 1;
}

}  // namespace heraldry::cli
