// The one place with OpenMP: points are evaluated in chunks with a dynamic schedule (points
// differ in cost: the cutoff grows with squeezing and noise); between chunks the calling thread
// may checkpoint and report progress. Results land in per-job slots, so they do not depend on
// the thread count or the schedule.
#include <atomic>
#include <algorithm>
#include <cstdlib>
#include <exception>
#include <mutex>
#include <string>
#include <thread>

#include "heraldry/sweep.hpp"
#include "sweep/executor.hpp"

#if defined(HERALDRY_HAVE_OPENMP)
#include <omp.h>
#endif

namespace heraldry::sweep {

// The bound of --threads and [numerics] threads; OMP_NUM_THREADS is held to it too (libgomp
// would otherwise try to allocate a pool for 2^31 threads and end the process).
constexpr int max_threads = 1024;

int thread_count(int requested) {
  if (requested > 0) return std::min(requested, max_threads);
#if defined(HERALDRY_HAVE_OPENMP)
  const int n = omp_get_max_threads();
  if (n > max_threads) omp_set_num_threads(max_threads);
  return std::clamp(n, 1, max_threads);
#else
  return 1;
#endif
}

void dispatch(std::span<const std::size_t> todo, int threads,
              const std::function<void(std::size_t job)>& evaluate, const std::function<bool()>& stop,
              const std::function<void(std::size_t done)>& after_chunk) {
  threads = std::max(1, threads);
  // Up to 16 points per thread and chunk (at least 8 chunks in all): checkpoints and stop
  // requests are honoured often, and barrier waits stay rare (callers order the jobs by
  // decreasing cost, so a chunk holds points of similar cost).
  const std::size_t per_thread =
      std::clamp<std::size_t>(todo.size() / (static_cast<std::size_t>(threads) * 8), 1, 16);
  const std::size_t chunk = static_cast<std::size_t>(threads) * per_thread;
  std::size_t done = 0;
  while (done < todo.size()) {
    if (stop && stop()) return;
    const std::size_t end = std::min(todo.size(), done + chunk);
    std::exception_ptr failure;
    std::mutex failure_mutex;
    const long long first = static_cast<long long>(done), last = static_cast<long long>(end);
#if defined(HERALDRY_HAVE_OPENMP)
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
#endif
    for (long long i = first; i < last; ++i) {
      try {
        evaluate(todo[static_cast<std::size_t>(i)]);
      } catch (...) {
        std::lock_guard<std::mutex> lock(failure_mutex);
        if (!failure) failure = std::current_exception();
      }
    }
    if (failure) std::rethrow_exception(failure);
    done = end;
    if (after_chunk) after_chunk(done);
  }
}

namespace {

// The jobs in chunks of the dispatcher; results kept per chunk and stored on the calling thread
// once the chunk is done, in job order.
class LocalExecutor final : public Executor {
public:
  explicit LocalExecutor(int threads) : threads_(threads) {}
  int ranks() const override { return 1; }
  void run(std::span<const Job> jobs, const ExecutorHooks& hooks) override {
    std::vector<std::size_t> todo(jobs.size());
    for (std::size_t j = 0; j < todo.size(); ++j) todo[j] = j;
    std::vector<point::PointResult> results(jobs.size());
    // A point cancelled by a stop request (point::Cancelled, from inside its evaluation) has no
    // result: the points of its chunk that finished are stored, the rest stay to be computed.
    std::vector<char> finished(jobs.size(), 0);
    std::atomic<bool> cancelled{false};
    std::size_t stored = 0;
    auto store_finished = [&](std::size_t done) {
      for (; stored < done; ++stored)
        if (finished[stored]) hooks.store(Outcome{jobs[stored], results[stored]});
    };
    dispatch(
        todo, threads_,
        [&](std::size_t j) {
          try {
            results[j] = hooks.evaluate(jobs[j]);
            finished[j] = 1;
          } catch (const point::Cancelled&) {
            cancelled.store(true);
          }
        },
        [&] { return cancelled.load() || (hooks.stop && hooks.stop()); },
        [&](std::size_t done) {
          store_finished(done);
          if (hooks.tick) hooks.tick();
        });
  }

private:
  int threads_;
};

}  // namespace

std::unique_ptr<Executor> local_executor(int threads) { return std::make_unique<LocalExecutor>(threads); }

}  // namespace heraldry::sweep
