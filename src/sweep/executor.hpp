// How the jobs of a sweep are evaluated: one interface, a local implementation (the OpenMP
// dispatcher of this process) and a distributed one (MPI ranks, src/ranks/). `execute` runs one
// path whichever it is given. No MPI or OpenMP types here.
#pragma once

#include <cstddef>
#include <functional>
#include <memory>
#include <span>
#include <utility>

#include "heraldry/point.hpp"

namespace heraldry::sweep {

/// A grid point: (protocol index, flat index in that protocol's grid).
using Job = std::pair<std::size_t, std::size_t>;

/// What evaluating a job hands back.
struct Outcome {
  Job job{};
  point::PointResult result;
};

struct ExecutorHooks {
  std::function<point::PointResult(const Job&)> evaluate;  // thread-safe; runs on worker threads
  std::function<void(const Outcome&)> store;   // calling thread only: writes the result slot, marks it done
  std::function<bool()> stop;                  // calling thread, polled: no more jobs started
  std::function<void()> tick;                  // calling thread, after results arrive: checkpoint, progress
};

/// Evaluates jobs (callers order them by decreasing cost) and stores every result on the calling
/// thread. Returns when every job is done or, after `stop()`, once the jobs already started are
/// back (their results stored). Rethrows the first error of any job.
class Executor {
public:
  virtual ~Executor() = default;
  virtual void run(std::span<const Job> jobs, const ExecutorHooks& hooks) = 0;
  /// The processes that take part (1 for the local executor).
  virtual int ranks() const = 0;
};

/// This process alone, with `threads` threads (src/sweep/dispatch.cpp).
std::unique_ptr<Executor> local_executor(int threads);

/// This process's rank and the number of ranks (0 and 1 without MPI, or when not started by an
/// MPI launcher) (src/ranks/).
int rank_index();
int rank_count();

/// Rank 0 of K > 1 ranks: hands out jobs to ranks 1..K-1 and to a local worker thread
/// (src/ranks/). Every other rank waits in `serve` until the executor is destroyed, which
/// releases them whatever way the run ends. std::logic_error in a build without MPI.
std::unique_ptr<Executor> rank_executor(int threads);

/// Ranks 1..K-1: evaluates the batches rank 0 hands out with `threads` threads until rank 0
/// says stop. When `stop()` (a signal on this rank) is true after a batch, asks rank 0 to stop
/// the whole run. An error of `evaluate` is reported to rank 0, which rethrows it; an error of
/// the exchange itself is thrown here (the caller decides: the command line aborts the job).
void serve(int threads, const std::function<point::PointResult(const Job&)>& evaluate,
           const std::function<bool()>& stop);

}  // namespace heraldry::sweep
