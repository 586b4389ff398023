// Batch runs over MPI ranks: rank 0 coordinates and is the only writer, ranks 1..K-1 evaluate
// batches of points. Each point is independent and deterministic, so the values do not depend
// on which rank computed them (scripts/cluster/README.md: design, sizing, measured efficiency).
//
// Protocol (all on MPI_COMM_WORLD, C API, threading level "funneled": only the main thread of a
// rank calls MPI; OpenMP threads and rank 0's local worker thread never do):
//   worker -> 0  tag_report  long long [flags, n, n x (protocol, flat)]
//   worker -> 0  tag_values  double    [n x (every field of point::result_fields(), in order;
//                                        integers and enumerations are exact in a double)]
//   worker -> 0  tag_error   char      (only with flag_error) the error's fields, '\0'-separated
//   0 -> worker  tag_work    long long [n x (protocol, flat)]; empty: stop and return
// A worker's first report is empty (a request); every report gets exactly one tag_work reply.
// Waits poll with MPI_Iprobe and short sleeps: OpenMPI's blocking receive spins at 100% CPU,
// which would take the core of a compute thread on rank 0 or of a rank on a shared node.
#include <algorithm>
#include <cstdlib>
#include <stdexcept>

#include "heraldry/common.hpp"
#include "heraldry/ranks.hpp"
#include "heraldry/scenario.hpp"
#include "sweep/executor.hpp"

namespace heraldry::ranks {

bool built_with_mpi() {
#if HERALDRY_HAVE_MPI
  return true;
#else
  return false;
#endif
}

int launcher_ranks() {
  for (const char* name : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "MV2_COMM_WORLD_SIZE"}) {
    const char* v = std::getenv(name);
    if (v == nullptr) continue;
    const long n = std::strtol(v, nullptr, 10);
    if (n > 1) return static_cast<int>(std::min(n, 1L << 20));
  }
  return 1;
}

}  // namespace heraldry::ranks

#if HERALDRY_HAVE_MPI

// The C API only (CMake links MPI::MPI_C): keep mpi.h from pulling in the removed C++ bindings.
#define OMPI_SKIP_MPICXX 1
#define MPICH_SKIP_MPICXX 1
#include <mpi.h>

#include <algorithm>
#include <chrono>
#include <condition_variable>
#include <cstdio>
#include <exception>
#include <mutex>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "heraldry/sweep.hpp"

namespace heraldry::sweep {

namespace {

constexpr int tag_report = 1, tag_values = 2, tag_error = 3, tag_work = 4;
constexpr long long flag_stopping = 1, flag_error = 2;
constexpr std::size_t ints_per_point = 2;
std::size_t doubles_per_point() { return point::result_fields().size(); }

// A broken message is a programming error (both ends are this file): the run cannot continue
// consistently on any rank. Thrown; the command line ends the whole job.
[[noreturn]] void protocol_error(const char* what) {
  throw std::logic_error(std::string("heraldry: internal error in the MPI batch protocol: ") + what);
}

MPI_Status wait_for(int source, int tag) {
  int flag = 0;
  MPI_Status st;
  for (;;) {
    MPI_Iprobe(source, tag, MPI_COMM_WORLD, &flag, &st);
    if (flag) return st;
    std::this_thread::sleep_for(std::chrono::microseconds(50));
  }
}

template <class T>
std::vector<T> receive(int source, int tag, MPI_Datatype type) {
  const MPI_Status st = wait_for(source, tag);
  int n = 0;
  MPI_Get_count(&st, type, &n);
  std::vector<T> v(static_cast<std::size_t>(n));
  MPI_Recv(v.data(), n, type, st.MPI_SOURCE, tag, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  return v;
}

// An error found on a rank, with what rank 0 needs to rethrow it as the same kind.
struct RankError {
  int rank = 0;
  bool input = false;  // an InputError: exit code 2 on rank 0, as in a single-process run
  std::string file, line, key, value, expected, what;

  std::string encode() const {
    std::string s;
    for (const std::string* f : {&file, &line, &key, &value, &expected, &what}) {
      s += *f;
      s += '\0';
    }
    s.insert(0, 1, input ? 'I' : 'E');
    return s;
  }
  static RankError decode(int rank, const std::vector<char>& bytes) {
    RankError e;
    e.rank = rank;
    if (bytes.empty()) protocol_error("empty error message");
    e.input = bytes[0] == 'I';
    std::string* fields[] = {&e.file, &e.line, &e.key, &e.value, &e.expected, &e.what};
    std::size_t f = 0;
    for (std::size_t i = 1; i < bytes.size() && f < 6; ++i) {
      if (bytes[i] == '\0')
        ++f;
      else
        fields[f]->push_back(bytes[i]);
    }
    return e;
  }
  [[noreturn]] void raise() const {
    const std::string where = "found on MPI rank " + std::to_string(rank);
    if (input) {
      const int line_no = line.empty() ? 0 : std::stoi(line);
      // The hint is what InputError appended to its formatted message: recover it.
      const std::string bare = InputError(file, line_no, key, value, expected).what();
      std::string hint = where;
      if (what.size() > bare.size() + 3 && what.compare(0, bare.size(), bare) == 0)
        hint = what.substr(bare.size() + 2, what.size() - bare.size() - 3) + "; " + where;
      throw InputError(file, line_no, key, value, expected, hint);
    }
    throw std::runtime_error(what + " (" + where + ")");
  }
};

RankError describe(int rank, std::exception_ptr failure) {
  RankError e;
  e.rank = rank;
  try {
    std::rethrow_exception(failure);
  } catch (const InputError& x) {
    e.input = true;
    e.file = x.file();
    e.line = std::to_string(x.line());
    e.key = x.key();
    e.value = x.value();
    e.expected = x.expected();
    e.what = x.what();
  } catch (const std::exception& x) {
    e.what = x.what();
  } catch (...) {
    e.what = "an unknown exception";
  }
  return e;
}

using Evaluate = std::function<point::PointResult(const Job&)>;

// Evaluates a batch with the OpenMP dispatcher; each job writes its own slot.
std::exception_ptr evaluate_batch(const std::vector<Job>& batch, int threads, const Evaluate& evaluate,
                                  std::vector<Outcome>& out) {
  out.assign(batch.size(), Outcome{});
  std::vector<std::size_t> todo(batch.size());
  for (std::size_t i = 0; i < todo.size(); ++i) todo[i] = i;
  try {
    dispatch(todo, threads, [&](std::size_t i) { out[i] = Outcome{batch[i], evaluate(batch[i])}; }, {}, {});
  } catch (...) {
    return std::current_exception();
  }
  return nullptr;
}

void send_report(long long flags, const std::vector<Outcome>& out, const RankError* error) {
  std::vector<long long> ints{flags, static_cast<long long>(out.size())};
  std::vector<double> values;
  for (const Outcome& o : out) {
    ints.insert(ints.end(), {static_cast<long long>(o.job.first), static_cast<long long>(o.job.second)});
    for (const point::Field& f : point::result_fields()) values.push_back(f.get(o.result));
  }
  MPI_Send(ints.data(), static_cast<int>(ints.size()), MPI_LONG_LONG, 0, tag_report, MPI_COMM_WORLD);
  MPI_Send(values.data(), static_cast<int>(values.size()), MPI_DOUBLE, 0, tag_values, MPI_COMM_WORLD);
  if (flags & flag_error) {
    const std::string text = error->encode();
    MPI_Send(text.data(), static_cast<int>(text.size()), MPI_CHAR, 0, tag_error, MPI_COMM_WORLD);
  }
}

struct Report {
  int rank = 0;
  long long flags = 0;
  std::vector<Outcome> outcomes;
  std::optional<RankError> error;
};

Report receive_report(int source) {
  Report rep;
  const auto ints = receive<long long>(source, tag_report, MPI_LONG_LONG);
  rep.rank = source;
  const auto values = receive<double>(source, tag_values, MPI_DOUBLE);
  if (ints.size() < 2) protocol_error("short report");
  rep.flags = ints[0];
  const auto n = static_cast<std::size_t>(ints[1]);
  const std::span<const point::Field> fields = point::result_fields();
  if (ints.size() != 2 + ints_per_point * n || values.size() != doubles_per_point() * n)
    protocol_error("report sizes do not match its point count");
  for (std::size_t k = 0; k < n; ++k) {
    const long long* i = &ints[2 + ints_per_point * k];
    const double* v = &values[doubles_per_point() * k];
    Outcome o;
    o.job = {static_cast<std::size_t>(i[0]), static_cast<std::size_t>(i[1])};
    for (std::size_t f = 0; f < fields.size(); ++f) fields[f].set(o.result, v[f]);
    rep.outcomes.push_back(o);
  }
  if (rep.flags & flag_error) rep.error = RankError::decode(source, receive<char>(source, tag_error, MPI_CHAR));
  return rep;
}

void send_work(int rank, const std::vector<Job>& batch) {
  std::vector<long long> ints;
  for (const Job& j : batch) ints.insert(ints.end(), {static_cast<long long>(j.first), static_cast<long long>(j.second)});
  MPI_Send(ints.data(), static_cast<int>(ints.size()), MPI_LONG_LONG, rank, tag_work, MPI_COMM_WORLD);
}

// Guided self-scheduling (Polychronopoulos & Kuck, IEEE Trans. Comput. C-36, 1425 (1987)): each
// batch is a share of what is left, so batches shrink towards the end and the ranks finish
// together. At least one point per thread (the ranks' dispatchers stay busy), at most 16 per
// thread (stop requests and checkpoints are honoured within a few batches).
std::size_t batch_size(std::size_t remaining, std::size_t workers, int threads) {
  const auto t = static_cast<std::size_t>(std::max(1, threads));
  const std::size_t share = (remaining + 2 * workers - 1) / (2 * workers);
  return std::min(remaining, std::clamp<std::size_t>(share, t, 16 * t));
}

// Rank 0's own compute: a thread that evaluates one batch at a time with the dispatcher, while
// the main thread talks MPI, stores results and writes checkpoints.
class LocalWorker {
public:
  LocalWorker(int threads, const Evaluate& evaluate)
      : threads_(threads), evaluate_(evaluate), thread_([this] { loop(); }) {}
  ~LocalWorker() {
    {
      std::lock_guard<std::mutex> lock(m_);
      quit_ = true;
    }
    cv_.notify_all();
    thread_.join();
  }
  void give(std::vector<Job> batch) {
    {
      std::lock_guard<std::mutex> lock(m_);
      batch_ = std::move(batch);
      has_batch_ = true;
    }
    cv_.notify_all();
  }
  // Waits up to `wait` for the current batch; true (with its results) when it is done.
  bool take(std::vector<Outcome>& out, std::exception_ptr& failure, std::chrono::microseconds wait) {
    std::unique_lock<std::mutex> lock(m_);
    if (!cv_.wait_for(lock, wait, [this] { return has_out_; })) return false;
    out = std::move(out_);
    failure = failure_;
    has_out_ = false;
    return true;
  }

private:
  void loop() {
    for (;;) {
      std::vector<Job> batch;
      {
        std::unique_lock<std::mutex> lock(m_);
        cv_.wait(lock, [this] { return has_batch_ || quit_; });
        if (!has_batch_) return;
        batch = std::move(batch_);
        has_batch_ = false;
      }
      std::vector<Outcome> out;
      const std::exception_ptr failure = evaluate_batch(batch, threads_, evaluate_, out);
      {
        std::lock_guard<std::mutex> lock(m_);
        out_ = std::move(out);
        failure_ = failure;
        has_out_ = true;
      }
      cv_.notify_all();
    }
  }

  int threads_;
  const Evaluate& evaluate_;
  std::mutex m_;
  std::condition_variable cv_;
  std::vector<Job> batch_;
  std::vector<Outcome> out_;
  std::exception_ptr failure_;
  bool has_batch_ = false, has_out_ = false, quit_ = false;
  std::thread thread_;  // last: starts after the members above exist
};

// MPI is usable between MPI_Init and MPI_Finalize (only once per process).
bool mpi_active() {
  int init = 0, done = 0;
  MPI_Initialized(&init);
  MPI_Finalized(&done);
  return init && !done;
}

// Rank 0 of K > 1. On construction every other rank is waiting for its first batch; the
// destructor tells every rank still waiting to stop, so that no rank hangs whatever way the
// run ends (an error before, during or instead of run()).
class RankExecutor final : public Executor {
public:
  explicit RankExecutor(int threads) : threads_(threads), waiting_(static_cast<std::size_t>(rank_count()), 1) {}
  ~RankExecutor() override { release(); }
  int ranks() const override { return static_cast<int>(waiting_.size()); }
  void run(std::span<const Job> jobs, const ExecutorHooks& hooks) override;

private:
  void release() noexcept {
    for (std::size_t r = 1; r < waiting_.size(); ++r) {
      if (!waiting_[r]) continue;
      try {
        receive_report(static_cast<int>(r));  // its request (a worker only reports when asked to work)
        send_work(static_cast<int>(r), {});
      } catch (...) {
        // A broken exchange while leaving: nothing more can be told to that rank.
      }
      waiting_[r] = 0;
    }
  }

  int threads_;
  std::vector<char> waiting_;  // ranks that still wait for an answer
};

}  // namespace

int rank_index() {
  int r = 0;
  if (mpi_active()) MPI_Comm_rank(MPI_COMM_WORLD, &r);
  return r;
}

int rank_count() {
  int n = 1;
  if (mpi_active()) MPI_Comm_size(MPI_COMM_WORLD, &n);
  return n;
}

std::unique_ptr<Executor> rank_executor(int threads) { return std::make_unique<RankExecutor>(threads); }

void RankExecutor::run(std::span<const Job> jobs, const ExecutorHooks& hooks) {
  const int threads = threads_;
  std::vector<char>& waiting_ranks = waiting_;
  const std::size_t workers = waiting_ranks.size();  // ranks 1..K-1 and rank 0's thread
  std::size_t next = 0;
  bool stopping = false;
  std::optional<RankError> error;
  std::exception_ptr local_failure;
  auto more = [&]() {
    if (!stopping && (error || local_failure || hooks.stop())) stopping = true;
    return !stopping && next < jobs.size();
  };
  auto next_batch = [&]() {
    const std::size_t n = batch_size(jobs.size() - next, workers, threads);
    std::vector<Job> batch(jobs.begin() + static_cast<std::ptrdiff_t>(next),
                           jobs.begin() + static_cast<std::ptrdiff_t>(next + n));
    next += n;
    return batch;
  };

  std::size_t remote_active = 0;
  for (std::size_t r = 1; r < waiting_ranks.size(); ++r) remote_active += waiting_ranks[r] ? 1 : 0;
  bool local_busy = false;
  {
    LocalWorker local(threads, hooks.evaluate);
    if (more()) {
      local.give(next_batch());
      local_busy = true;
    }
    // Poll interval: 50 µs after a message, doubling while nothing arrives up to 1 ms. Each
    // poll takes a few µs from the core of rank 0's compute thread: a fixed 100 µs interval
    // cost 3-5% of a one-thread rank in system time alone (scripts/cluster/bench_ranks.sh); with
    // the backoff two ranks use no more CPU time in all than one. A worker waits at most ~1 ms
    // for its next batch; rank 0's own batches are picked up at once.
    auto wait = std::chrono::microseconds(50);
    while (local_busy || remote_active > 0) {
      bool arrived = false, answered = false;
      // Requests and results of the other ranks.
      for (;;) {
        int flag = 0;
        MPI_Status st;
        MPI_Iprobe(MPI_ANY_SOURCE, tag_report, MPI_COMM_WORLD, &flag, &st);
        if (!flag) break;
        Report rep = receive_report(st.MPI_SOURCE);
        for (const Outcome& o : rep.outcomes) hooks.store(o);
        if (rep.flags & flag_stopping) stopping = true;
        if (rep.error && !error) error = rep.error;
        arrived = arrived || !rep.outcomes.empty();
        answered = true;
        if (more()) {
          send_work(rep.rank, next_batch());
        } else {
          send_work(rep.rank, {});
          waiting_ranks[static_cast<std::size_t>(rep.rank)] = 0;
          --remote_active;
        }
      }
      // Rank 0's own batch (the wait doubles as the poll interval).
      std::vector<Outcome> out;
      std::exception_ptr failure;
      if (local_busy && local.take(out, failure, wait)) {
        for (const Outcome& o : out)
          if (!failure) hooks.store(o);
        if (failure && !local_failure) local_failure = failure;
        arrived = true;
        local_busy = more();
        if (local_busy) local.give(next_batch());
      } else if (!local_busy) {
        std::this_thread::sleep_for(wait);
      }
      wait = answered ? std::chrono::microseconds(50) : std::min(2 * wait, std::chrono::microseconds(1000));
      if (arrived) hooks.tick();
    }
  }
  if (local_failure) std::rethrow_exception(local_failure);
  if (error) error->raise();
}

void serve(int threads, const Evaluate& evaluate, const std::function<bool()>& stop) {
  const int me = rank_index();
  {
    send_report(0, {}, nullptr);
    for (;;) {
      const auto ints = receive<long long>(0, tag_work, MPI_LONG_LONG);
      if (ints.empty()) return;
      if (ints.size() % 2 != 0) protocol_error("odd work message");
      std::vector<Job> batch;
      for (std::size_t k = 0; k < ints.size(); k += 2)
        batch.emplace_back(static_cast<std::size_t>(ints[k]), static_cast<std::size_t>(ints[k + 1]));
      std::vector<Outcome> out;
      const std::exception_ptr failure = evaluate_batch(batch, threads, evaluate, out);
      long long flags = stop() ? flag_stopping : 0;
      if (failure) {
        const RankError e = describe(me, failure);
        send_report(flags | flag_error, {}, &e);
      } else {
        send_report(flags, out, nullptr);
      }
    }
  }
  // An error outside the evaluation (allocation of a message, a broken exchange) leaves this
  // function as an exception: rank 0 would wait for this rank forever, so the caller must end
  // the whole job (the command line calls ranks::Session::abort).
}

}  // namespace heraldry::sweep

namespace heraldry::ranks {

Session::Session() {
  int init = 0, done = 0;
  MPI_Initialized(&init);
  MPI_Finalized(&done);
  if (done) return;  // MPI cannot start twice in a process: a single-process run
  if (!init) {
    int provided = 0;
    MPI_Init_thread(nullptr, nullptr, MPI_THREAD_FUNNELED, &provided);
    started_ = true;
  }
  ranks_.rank = sweep::rank_index();
  ranks_.size = sweep::rank_count();
}

void Session::abort(int code) noexcept {
  if (ranks_.size > 1) {
    std::fflush(stderr);
    MPI_Abort(MPI_COMM_WORLD, code);
  }
}

Session::~Session() {
  int done = 0;
  MPI_Finalized(&done);
  if (started_ && !done) MPI_Finalize();
}

std::optional<scenario::Scenario> shared_scenario(const std::function<scenario::Scenario()>& load) {
  const int ranks = sweep::rank_count();
  if (ranks == 1) return load();
  // [text length, path length]; -1: rank 0 could not load it (and reports why).
  long long sizes[2] = {-1, 0};
  if (sweep::rank_index() == 0) {
    std::optional<scenario::Scenario> sc;
    try {
      sc = load();
    } catch (...) {
      MPI_Bcast(sizes, 2, MPI_LONG_LONG, 0, MPI_COMM_WORLD);
      throw;
    }
    sizes[0] = static_cast<long long>(sc->text.size());
    sizes[1] = static_cast<long long>(sc->path.size());
    MPI_Bcast(sizes, 2, MPI_LONG_LONG, 0, MPI_COMM_WORLD);
    std::string both = sc->text + sc->path;
    MPI_Bcast(both.data(), static_cast<int>(both.size()), MPI_CHAR, 0, MPI_COMM_WORLD);
    return sc;
  }
  MPI_Bcast(sizes, 2, MPI_LONG_LONG, 0, MPI_COMM_WORLD);
  if (sizes[0] < 0) return std::nullopt;
  std::string both(static_cast<std::size_t>(sizes[0] + sizes[1]), '\0');
  MPI_Bcast(both.data(), static_cast<int>(both.size()), MPI_CHAR, 0, MPI_COMM_WORLD);
  const auto n = static_cast<std::size_t>(sizes[0]);
  try {
    return scenario::parse(both.substr(0, n), both.substr(n));
  } catch (const std::exception& e) {
    // Rank 0 parsed this very text: a failure here is a defect, and rank 0 would wait for this
    // rank; the caller ends the whole job.
    throw std::logic_error("heraldry: MPI rank " + std::to_string(sweep::rank_index()) +
                           " cannot parse the scenario rank 0 parsed: " + e.what());
  }
}

}  // namespace heraldry::ranks

#else  // without MPI: one rank, and the distributed paths are never taken

namespace heraldry::sweep {

int rank_index() { return 0; }
int rank_count() { return 1; }
std::unique_ptr<Executor> rank_executor(int) {
  throw std::logic_error("heraldry: rank_executor() needs a build with HERALDRY_WITH_MPI");
}
void serve(int, const std::function<point::PointResult(const Job&)>&, const std::function<bool()>&) {
  throw std::logic_error("heraldry: serve() needs a build with HERALDRY_WITH_MPI");
}

}  // namespace heraldry::sweep

namespace heraldry::ranks {

Session::Session() = default;
Session::~Session() = default;
void Session::abort(int) noexcept {}

std::optional<scenario::Scenario> shared_scenario(const std::function<scenario::Scenario()>& load) { return load(); }

}  // namespace heraldry::ranks

#endif
