// The main job: sweep every protocol over its grid, checkpoint, resume, write the HDF5 file and
// compute the verdict. Used by `heraldry run`; testable without the executable.
#pragma once

#include <cstddef>
#include <functional>
#include <optional>
#include <string>

#include "heraldry/output.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/verdict.hpp"

namespace heraldry::run {

struct Options {
  std::string output;                 // overrides [output] file when not empty
  int threads = 0;                    // overrides [numerics] threads when > 0
  bool force = false;                 // overwrite an existing complete result file
  std::size_t stop_after_points = 0;  // test hook: stop (as if interrupted) once this many new points are done
  double checkpoint_seconds = 5.0;    // checkpoint period
  /// Progress on stderr: `terminal` rewrites one line in place; `lines` prints a plain line
  /// every `progress_seconds` (for batch logs: points done, rate, time left, the point being
  /// computed); `none` prints nothing.
  enum class Progress { none, terminal, lines };
  Progress progress = Progress::none;
  double progress_seconds = 10.0;
  std::string version = "0";
};

struct Summary {
  std::string file;                   // the result (complete) or the checkpoint (interrupted)
  std::size_t total_points = 0;
  std::size_t resumed_points = 0;     // taken from a checkpoint
  std::size_t computed_points = 0;    // computed by this run
  std::size_t failed_points = 0;      // status not ok
  double seconds = 0.0;
  double verdict_seconds = 0.0;       // of `seconds`: the verdict (on rank 0 only, after the sweep)
  int threads = 1;
  bool interrupted = false;
  bool worker = false;                // an MPI rank > 0: it only evaluated points for rank 0 (no data, no file)
  int ranks = 1;                      // MPI ranks that took part (1 without MPI)
  output::RunData data;
};

/// Asks a running `execute` to stop at the next chunk boundary and keep its checkpoint
/// (async-signal-safe: sets an atomic flag). On an MPI rank > 0 the rank finishes its batch and
/// asks rank 0 to stop the whole run; rank 0 writes the checkpoint.
void request_stop();

/// Runs (or resumes) the sweep, then computes the verdict (verdict::compute). Throws InputError
/// for a result that exists already (without force) or a checkpoint of another scenario;
/// std::runtime_error for an unwritable output. Under MPI (a ranks::Session with K > 1 ranks) it
/// must be called on every rank with the same scenario and options; the values equal those of a
/// single-process run. An error on any rank (e.g. an InputError found while evaluating a point)
/// is rethrown on rank 0, naming the rank.
Summary execute(const scenario::Scenario& sc, const Options& options);

/// The run time of a scenario, before running it: the cost model the run orders its points by
/// (the bare link's Gaussian cutoff N at the point's distance, ~N^3.5 per step), scaled per
/// protocol by the CPU time of points of its grid (its cheapest point, then points spread over
/// its swept axes while its share of `budget_seconds`, in proportion to its modelled cost,
/// lasts). Used by `heraldry check`.
struct Estimate {
  std::size_t points = 0;
  double sweep_cpu_seconds = 0.0;    // every point of the grid, on one thread
  /// The verdict after the sweep, on one thread: every setting at the target distance, and the
  /// refinement of three crossings per protocol (counted as 8 evaluations each at the protocol's
  /// median cost; a crossing beyond the grid needs none, one near the far end costs more).
  double verdict_cpu_seconds = 0.0;
  double verdict_crossings_cpu_seconds = 0.0;  // of which the crossings (3 jobs per protocol in parallel)
  std::size_t verdict_crossing_jobs = 0;
  std::size_t timed_points = 0;
  double timing_seconds = 0.0;       // spent calibrating
  double cpu_seconds() const { return sweep_cpu_seconds + verdict_cpu_seconds; }
  /// Wall-clock seconds with `threads` threads on each of `ranks` ranks (the sweep shared evenly,
  /// the verdict on rank 0's threads).
  double seconds(int threads, int ranks = 1) const;
};
Estimate estimate(const scenario::Scenario& sc, double budget_seconds = 0.3);

}  // namespace heraldry::run
