// The main job: sweep every protocol over its grid, checkpoint, resume, write the HDF5 file and
// compute the verdict. Used by `heraldry run`; testable without the executable.
#pragma once

#include <cstddef>
#include <functional>
#include <optional>
#include <string>

#include "heraldry/gaussian.hpp"
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
  bool progress = false;              // progress line on stderr
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

/// This process's place in an MPI job: rank 0 of 1 without MPI or when not started by an MPI
/// launcher.
struct Ranks {
  int rank = 0;
  int size = 1;
};

/// MPI for the lifetime of the object (MPI_Init_thread with funneled threading; MPI_Finalize in
/// the destructor) in a build configured with HERALDRY_WITH_MPI; nothing otherwise. One per
/// process, created before `shared_scenario` and `execute`. With K > 1 ranks, `execute` runs
/// the sweep on all of them: rank 0 coordinates and is the only one that writes files; ranks
/// 1..K-1 return a Summary with `worker` set.
class RankSession {
public:
  RankSession();
  ~RankSession();
  RankSession(const RankSession&) = delete;
  RankSession& operator=(const RankSession&) = delete;
  Ranks ranks() const { return ranks_; }

private:
  Ranks ranks_;
  bool started_ = false;
};

/// The scenario every rank sweeps: rank 0 calls `load` and sends the text to the other ranks,
/// which parse it (so the ranks agree even when the file is not visible on every node). Rethrows
/// load's error on rank 0; returns nullopt on the other ranks in that case (they should exit
/// quietly: rank 0 reports). Without MPI: load().
std::optional<scenario::Scenario> shared_scenario(const std::function<scenario::Scenario()>& load);

/// Asks a running `execute` to stop at the next chunk boundary and keep its checkpoint
/// (async-signal-safe: sets an atomic flag). On an MPI rank > 0 the rank finishes its batch and
/// asks rank 0 to stop the whole run; rank 0 writes the checkpoint.
void request_stop();

/// The midpoint-relay baseline at distance d: two copies of the source, each sending mode b over
/// d/2 (the one-way link model at half the distance) to a station that makes an ideal CV Bell
/// measurement (Gaussian entanglement swapping, PHYSICS.md §9; van Loock & Braunstein, PRA 61,
/// 010302(R) (2000)); the conditional state of the two a modes. Needs a modelled link (not direct).
gaussian::StandardForm relay_state(const scenario::Scenario& sc, double distance_m);

/// The bare link (Gaussian layer) on the distance grid.
output::LinkTable link_table(const scenario::Scenario& sc);

/// The verdict of a complete run: evaluates every swept setting at the target distance, keeps
/// the best E_N, and refines the crossings between grid points (to 1e-4 of the grid step), in
/// parallel on `threads` threads.
verdict::Verdict compute_verdict(const scenario::Scenario& sc, const sweep::Plan& plan, const output::RunData& data,
                                 int threads = 1);

/// Runs (or resumes) the sweep. Throws InputError for a result that exists already (without
/// force) or a checkpoint of another scenario; std::runtime_error for an unwritable output.
/// Under MPI (a RankSession with K > 1 ranks) it must be called on every rank with the same
/// scenario and options; the values equal those of a single-process run. An error on any rank
/// (e.g. an InputError found while evaluating a point) is rethrown on rank 0, naming the rank.
Summary execute(const scenario::Scenario& sc, const Options& options);

/// The verdict as a terminal table plus one line per protocol in words.
std::string format_verdict(const scenario::Scenario& sc, const verdict::Verdict& v);

}  // namespace heraldry::run
