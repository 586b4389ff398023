// MPI for batch runs on a cluster: the session that starts and ends MPI, and the scenario every
// rank sweeps. In a build without HERALDRY_WITH_MPI these are single-process no-ops. No MPI types
// here.
#pragma once

#include <functional>
#include <optional>

#include "heraldry/scenario.hpp"

namespace heraldry::ranks {

/// This process's place in an MPI job: rank 0 of 1 without MPI or when not started by an MPI
/// launcher.
struct Ranks {
  int rank = 0;
  int size = 1;
};

/// MPI for the lifetime of the object (MPI_Init_thread with funneled threading; MPI_Finalize in
/// the destructor) in a build configured with HERALDRY_WITH_MPI; nothing otherwise. One per
/// process, created before `shared_scenario` and `run::execute`. With K > 1 ranks, `execute`
/// runs the sweep on all of them: rank 0 coordinates and is the only one that writes files.
class Session {
public:
  Session();
  ~Session();
  Session(const Session&) = delete;
  Session& operator=(const Session&) = delete;
  Ranks ranks() const { return ranks_; }
  /// Ends every rank of the job with `code` (MPI_Abort) when there are several; a no-op for one.
  /// The command line's decision after an error that leaves other ranks waiting.
  void abort(int code) noexcept;

private:
  Ranks ranks_;
  bool started_ = false;
};

/// Whether this build distributes runs over MPI ranks (HERALDRY_WITH_MPI).
bool built_with_mpi();

/// The number of processes an MPI launcher started this one among, read from the launchers'
/// environment (Open MPI's OMPI_COMM_WORLD_SIZE, MPICH/Hydra and Intel MPI's PMI_SIZE,
/// MVAPICH's MV2_COMM_WORLD_SIZE); 1 when none says more. A build without MPI started as several
/// ranks would run the whole sweep once per rank: the command line refuses that.
int launcher_ranks();

/// The scenario every rank sweeps: rank 0 calls `load` and sends the text to the other ranks,
/// which parse it (so the ranks agree even when the file is not visible on every node). Rethrows
/// load's error on rank 0; returns nullopt on the other ranks in that case (they should exit
/// quietly: rank 0 reports). A rank that cannot parse what rank 0 parsed throws
/// std::logic_error (a defect; the caller ends the job). Without MPI: load().
std::optional<scenario::Scenario> shared_scenario(const std::function<scenario::Scenario()>& load);

}  // namespace heraldry::ranks
