// The subcommands of the heraldry executable. Each returns the process exit code:
// 0 success, 2 bad input (InputError), 3 a numerical budget was missed.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "heraldry/scenario.hpp"
#include "heraldry/verdict.hpp"

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
  double checkpoint_seconds = 5.0;  // testing: checkpoint period
  double progress_seconds = 10.0;   // period of the progress lines when stderr is not a terminal
};

struct TuneOptions {
  std::string scenario;
  std::string protocol;
  std::string objective;  // "fidelity", "log-negativity" or "rate"
  std::optional<double> at_m;
  std::optional<double> min_rate_hz;
  std::optional<double> max_false_herald_fraction;
  int threads = 0;  // 0: [numerics] threads, then OMP_NUM_THREADS or all cores
  bool exact_search = false;  // benchmarks: every evaluation at the scenario's tolerance
  bool json = false;
};

int cmd_example();
int cmd_run(const RunOptions& options);
int cmd_check(const std::string& scenario);
int cmd_link(const std::string& scenario, bool json);
int cmd_probe(const ProbeOptions& options);
int cmd_tune(const TuneOptions& options);

/// The caution line of an open-air link whose antennas are ideal (empty when they are not, or
/// for a line or measured channels): Goubau's best case, with typical real losses.
std::string antenna_caution(const scenario::Scenario& sc);

/// The verdict as a terminal table plus one line per protocol in words (src/cli/format.cpp).
std::string format_verdict(const scenario::Scenario& sc, const verdict::Verdict& v);

/// Before any work: the result file's folder exists or can be created (InputError otherwise).
void preflight_output(const scenario::Scenario& sc, const std::string& file);
/// What `check` and `run` both establish before any work (one function, so they agree).
struct Preflight {
  std::size_t points = 0;         // of every protocol's grid
  double checkpoint_bytes = 0.0;  // about: 8 bytes per figure per point
  /// The cutoff the bare link needs for the tolerance, smallest and largest over the distances
  /// surveyed (max_cutoff + 1 means: more than max_cutoff), and where the largest is.
  int cutoff_lo = 0, cutoff_hi = 0;
  double cutoff_at_m = 0.0;
  std::size_t survey_distances = 0;  // distances the survey looked at (at most 512, spread)
  std::size_t separable_distances = 0;  // of those, where the bare link is separable (no Fock state)
  std::vector<std::string> warnings;
};
/// Before any work: the grid's size (warned about when large; parse refused what is above
/// numerics.max_points), and the states at the cutoff the bare link needs (bounded by
/// max_cutoff), or at the fixed cutoff, fit in max_memory_mb: InputError naming the cutoff and
/// memory otherwise. Bounded in time: no trace deficit beyond max_cutoff is evaluated.
Preflight preflight(const scenario::Scenario& sc);

}  // namespace heraldry::cli
