// Batch runs over MPI ranks (src/sweep/mpi_run.cpp; compiled to stubs without HERALDRY_HAVE_MPI).
// No MPI types here: run.cpp calls these without knowing whether MPI is present.
//
// Roles: rank 0 coordinates (hands out batches of jobs on request, stores the results, writes the
// checkpoints and the final file: serial HDF5, one writer) and computes on a local worker thread;
// ranks 1..K-1 evaluate the batches they are given with the OpenMP dispatcher.
#pragma once

#include <cstddef>
#include <functional>
#include <span>
#include <utility>

#include "heraldry/steps.hpp"

namespace heraldry::run::detail {

/// A grid point: (protocol index, flat index in that protocol's grid).
using Job = std::pair<std::size_t, std::size_t>;

/// What evaluating a job hands back: the kernel's result and the heralding rate at that point.
struct Outcome {
  Job job{};
  steps::PointResult result;
  double heralding_rate_hz = 0.0;
};

/// This process's rank and the number of ranks (0 and 1 without MPI or before MPI_Init).
int rank_index();
int rank_count();

struct CoordinatorHooks {
  std::function<Outcome(const Job&)> evaluate;  // thread-safe; runs inside the dispatcher
  std::function<void(const Outcome&)> store;    // main thread only: writes the result slot, marks it done
  std::function<bool()> stop;                   // main thread, polled: no more batches handed out
  std::function<void()> tick;                   // main thread, after results arrive: checkpoint, progress
};

/// Rank 0 of K > 1: hands out `jobs` (in this order: callers sort by decreasing cost) in
/// batches to ranks 1..K-1 and to a local worker thread, stores every result on the calling
/// thread, and returns when every job is done or, after `stop()` or a stop request from another
/// rank, once every handed-out batch is back. Every other rank is released (told to stop) on
/// return. Rethrows the first error of any rank (InputError stays InputError; the message names
/// the rank).
void coordinate(std::span<const Job> jobs, int threads, const CoordinatorHooks& hooks);

/// Ranks 1..K-1: asks rank 0 for batches, evaluates each with `threads` threads and sends the
/// results back, until rank 0 says stop. When `stop()` (a signal on this rank) is true after a
/// batch, the report asks rank 0 to stop the run. Errors of `evaluate` are reported to rank 0.
void serve(int threads, const std::function<Outcome(const Job&)>& evaluate, const std::function<bool()>& stop);

/// Rank 0, at the start of `execute`: every other rank is now waiting for its first batch.
void expect_workers();

/// Rank 0, leaving `execute` early (an error before or instead of `coordinate`): tells every
/// rank still waiting for work to stop, so that no rank hangs. No-op when there is none.
void release_workers() noexcept;

}  // namespace heraldry::run::detail
