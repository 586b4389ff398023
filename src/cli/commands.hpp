// The subcommands of the heraldry executable. Each returns the process exit code:
// 0 success, 2 bad input (InputError), 3 a numerical budget was missed.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

namespace heraldry::cli {

struct ProbeOptions {
  std::string scenario;
  std::optional<double> at_m;
  bool json = false;
  std::vector<std::string> set;  // "protocol.step.key=value" pins of swept parameters (future)
};

struct RunOptions {
  std::string scenario;  // empty: the built-in demo
  std::string output;
  int threads = 0;
  bool force = false;
  std::size_t stop_after = 0;
};

int cmd_example();
int cmd_run(const RunOptions& options);
int cmd_check(const std::string& scenario);
int cmd_link(const std::string& scenario);
int cmd_probe(const ProbeOptions& options);

}  // namespace heraldry::cli
