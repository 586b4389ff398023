// The main job: grid, checkpoint/resume, the executor (local or MPI), the verdict, the final
// file.
#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <condition_variable>
#include <memory>
#include <mutex>
#include <thread>
#include <optional>

#include "heraldry/fock.hpp"
#include "heraldry/run.hpp"
#include "io/safe_file.hpp"
#include "run/cost_model.hpp"
#include "sweep/executor.hpp"

namespace heraldry::run {

namespace {

std::atomic<bool> stop_requested{false};

using Clock = std::chrono::steady_clock;

std::string utc_now() {
  const std::time_t t = std::time(nullptr);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&t));
  return buf;
}

// `cancel`: a stop request interrupts the point itself (point::Cancelled), so a signal is
// answered within about a second even inside one expensive point.
point::PointResult evaluate_job(const scenario::Scenario& sc, const sweep::Plan& plan, const sweep::Job& job,
                                const std::atomic<bool>* cancel = nullptr) {
  const auto [p, flat] = job;
  return sweep::evaluate_point(sc, plan, p, plan.protocols[p].unflatten(flat), -1.0, cancel);
}

// An MPI rank > 0: evaluates the batches rank 0 hands out; no files. An error of planning is
// reported to rank 0 with the first batch (rank 0 waits for every rank's request before it can
// return).
Summary serve_rank(const scenario::Scenario& sc, const Options& options) {
  const auto t0 = Clock::now();
  Summary summary;
  summary.worker = true;
  summary.ranks = sweep::rank_count();
  summary.threads = sweep::thread_count(options.threads > 0 ? options.threads : sc.numerics.threads);
  std::optional<sweep::Plan> plan;
  std::exception_ptr failure;
  try {
    plan = sweep::make_plan(sc);
    summary.total_points = plan->total_points();
  } catch (...) {
    failure = std::current_exception();
  }
  sweep::serve(
      summary.threads,
      [&](const sweep::Job& job) {
        if (failure) std::rethrow_exception(failure);
        return evaluate_job(sc, *plan, job);
      },
      [] { return stop_requested.load(); });
  summary.seconds = std::chrono::duration<double>(Clock::now() - t0).count();
  return summary;
}

// Most expensive points first (longest-processing-time order): chunks then hold points of
// similar cost and the threads rarely wait for one slow point at a chunk boundary (the cost
// model of src/run/cost_model.hpp).
// The order changes nothing in the results: each point writes its own slot.
std::vector<sweep::Job> ordered_jobs(const scenario::Scenario& sc, const sweep::Plan& plan,
                                     const output::RunData& data, Summary& summary) {
  std::vector<sweep::Job> jobs;
  for (std::size_t p = 0; p < plan.protocols.size(); ++p)
    for (std::size_t i = 0; i < plan.protocols[p].size(); ++i) {
      ++summary.total_points;
      if (data.protocols[p].done[i])
        ++summary.resumed_points;
      else
        jobs.emplace_back(p, i);
    }
  const std::vector<double> cost = detail::job_costs(sc, plan, jobs);
  std::vector<std::size_t> order(jobs.size());
  for (std::size_t j = 0; j < order.size(); ++j) order[j] = j;
  std::stable_sort(order.begin(), order.end(), [&](std::size_t x, std::size_t y) { return cost[x] > cost[y]; });
  std::vector<sweep::Job> out;
  for (std::size_t j : order) out.push_back(jobs[j]);
  return out;
}

}  // namespace

namespace detail {

std::vector<double> job_costs(const scenario::Scenario& sc, const sweep::Plan& plan, const std::vector<sweep::Job>& jobs) {
  const point::Source source = sweep::source_of(sc);
  std::vector<double> distance_cost;
  // O(1) per distance (a grid may have a million): the cutoff the marginal tails of the bare
  // link's state ask for, q^(N+1) = tolerance^2 with q = max(q_A, q_B) the larger thermal ratio,
  // at most max_cutoff; separable distances take the exact paths, about a cutoff-10 Fock point.
  // Only the order of the points depends on it.
  const double max_cutoff = sc.numerics.max_cutoff;
  const double log_tol2 = 2.0 * std::log(sc.numerics.tolerance);
  for (double d : sc.link.distances_m) {
    double n = max_cutoff;
    try {
      const gaussian::StandardForm s = point::bare_state(source, sc.link.model, d);
      if (gaussian::smallest_pt_symplectic(s) >= 1.0) {
        n = 10.0;
      } else {
        const double q = std::max({0.0, (s.a - 1.0) / (s.a + 1.0), (s.b - 1.0) / (s.b + 1.0)});
        const double log_q = std::log(q);  // -inf for the vacuum, 0 when q rounds to 1
        n = log_q < 0.0 ? std::clamp(log_tol2 / log_q, 1.0, max_cutoff) : max_cutoff;
      }
    } catch (const std::exception&) {
      n = max_cutoff;
    }
    distance_cost.push_back(std::pow(n, 3.5));
  }
  std::vector<double> cost(jobs.size());
  for (std::size_t j = 0; j < jobs.size(); ++j) {
    const auto [p, flat] = jobs[j];
    const std::size_t di = plan.protocols[p].unflatten(flat)[0];
    cost[j] = distance_cost[di] * static_cast<double>(sc.protocols[p].steps.size());
  }
  return cost;
}

}  // namespace detail

void request_stop() { stop_requested.store(true); }

Summary execute(const scenario::Scenario& sc, const Options& options) {
  namespace fs = std::filesystem;
  stop_requested.store(false);
  const int ranks = sweep::rank_count();
  if (ranks > 1 && sweep::rank_index() != 0) return serve_rank(sc, options);
  const int threads = sweep::thread_count(options.threads > 0 ? options.threads : sc.numerics.threads);
  // Created first: with several ranks its destructor releases the waiting ranks on every path.
  const std::unique_ptr<sweep::Executor> executor =
      ranks > 1 ? sweep::rank_executor(threads) : sweep::local_executor(threads);
  const auto t0 = Clock::now();
  Summary summary;
  summary.ranks = ranks;
  summary.threads = threads;
  summary.file = options.output.empty() ? sc.output.file : options.output;
  const std::string partial = summary.file + ".partial";
  // One run per output file at a time (released by the kernel if this process dies).
  const output::detail::OutputLock lock(summary.file);
  std::error_code ec;
  const bool have_partial = fs::exists(partial, ec);
  // A complete result is replaced only with --force, whatever checkpoint lies beside it.
  if (fs::exists(summary.file, ec) && !options.force)
    throw InputError(sc.path, 0, "output.file", "\"" + summary.file + "\"",
                     "a result file that does not exist yet", "it exists; pass --force to overwrite it");
  if (fs::path(summary.file).has_parent_path()) fs::create_directories(fs::path(summary.file).parent_path(), ec);

  const sweep::Plan plan = sweep::make_plan(sc);
  output::RunData data = output::empty_run(plan);
  if (have_partial) output::read_checkpoint(partial, sc, plan, data);
  data.link = point::link_table(sweep::source_of(sc), sc.link.model, sc.link.distances_m);
  output::Provenance prov{options.version, threads, ranks, utc_now()};

  const std::vector<sweep::Job> jobs = ordered_jobs(sc, plan, data, summary);
  auto last_checkpoint = Clock::now();
  std::size_t computed = 0;
  std::atomic<std::size_t> computed_now{0};  // `computed`, for the progress thread
  // The point most recently started (for the progress lines): protocol and flat index.
  std::atomic<std::size_t> now_protocol{0}, now_flat{0};
  sweep::ExecutorHooks hooks;
  hooks.evaluate = [&](const sweep::Job& job) {
    now_protocol.store(job.first);
    now_flat.store(job.second);
    // Several ranks: a rank stops between batches (a cancelled point there would read as an error).
    return evaluate_job(sc, plan, job, ranks > 1 ? nullptr : &stop_requested);
  };
  hooks.store = [&](const sweep::Outcome& o) {
    output::ProtocolTable& t = data.protocols.at(o.job.first);
    t.points.at(o.job.second) = o.result;
    t.done[o.job.second] = 1;
    ++computed;
    computed_now.store(computed);
  };
  hooks.stop = [&] {
    if (stop_requested.load()) return true;
    return options.stop_after_points > 0 && computed >= options.stop_after_points;
  };
  hooks.tick = [&] {
    const double since = std::chrono::duration<double>(Clock::now() - last_checkpoint).count();
    if (since >= options.checkpoint_seconds) {
      output::write_file(partial, sc, plan, data, prov, false);
      last_checkpoint = Clock::now();
    }
    const double el = std::chrono::duration<double>(Clock::now() - t0).count();
    const double rate = static_cast<double>(computed) / std::max(el, 1e-9);
    const double left = static_cast<double>(jobs.size() - computed) / std::max(rate, 1e-9);
    if (options.progress == Options::Progress::terminal) {
      std::fprintf(stderr, "\r  %zu/%zu points, %.3g points/s, %.0f s left   ", summary.resumed_points + computed,
                   summary.total_points, rate, left);
      std::fflush(stderr);
    }
  };
  // Batch logs: a plain line every progress_seconds from a thread of its own, so that it comes
  // on time even while one expensive point holds the sweep (it only reads counters and prints).
  std::mutex line_mutex;
  std::condition_variable line_cv;
  bool sweep_over = false;
  std::thread lines;
  if (options.progress == Options::Progress::lines) {
    lines = std::thread([&] {
      std::unique_lock<std::mutex> lock(line_mutex);
      for (;;) {
        const auto period = std::chrono::duration<double>(std::max(0.05, options.progress_seconds));
        if (line_cv.wait_for(lock, period, [&] { return sweep_over; })) return;
        const std::size_t done = computed_now.load();
        const double el = std::chrono::duration<double>(Clock::now() - t0).count();
        const double rate = static_cast<double>(done) / std::max(el, 1e-9);
        const double left = done > 0 ? static_cast<double>(jobs.size() - done) / rate : 0.0;
        const std::size_t p = now_protocol.load();
        const double d = plan.protocols[p].axes[0].values[plan.protocols[p].unflatten(now_flat.load())[0]];
        char eta[48];
        if (done > 0)
          std::snprintf(eta, sizeof eta, "about %.0f s left", left);
        else
          std::snprintf(eta, sizeof eta, "no estimate yet");
        std::fprintf(stderr, "heraldry run: %zu/%zu points (%.1f %%) after %.0f s, %.3g points/s, %s; computing '%s' at %.4g m\n",
                     summary.resumed_points + done, summary.total_points,
                     100.0 * static_cast<double>(summary.resumed_points + done) /
                         static_cast<double>(std::max<std::size_t>(1, summary.total_points)),
                     el, rate, eta, plan.protocols[p].name.c_str(), d);
        std::fflush(stderr);
      }
    });
  }
  auto end_lines = [&] {
    if (!lines.joinable()) return;
    {
      std::lock_guard<std::mutex> lock(line_mutex);
      sweep_over = true;
    }
    line_cv.notify_all();
    lines.join();
  };
  try {
    executor->run(jobs, hooks);
  } catch (...) {
    end_lines();
    throw;
  }
  end_lines();
  if (options.progress == Options::Progress::terminal) std::fprintf(stderr, "\n");
  summary.computed_points = computed;

  if (computed < jobs.size()) {
    summary.interrupted = true;
    output::write_file(partial, sc, plan, data, prov, false);
    summary.file = partial;
  } else {
    const auto tv = Clock::now();
    if (options.progress == Options::Progress::lines) {
      std::fprintf(stderr, "heraldry run: the grid is done; computing the verdict\n");
      std::fflush(stderr);
    }
    try {
      data.verdict = verdict::compute(sc, plan, data.protocols, threads, [] { return stop_requested.load(); });
      summary.verdict_seconds = std::chrono::duration<double>(Clock::now() - tv).count();
      output::write_file(summary.file, sc, plan, data, prov, true);
      fs::remove(partial, ec);
    } catch (const verdict::Stopped&) {
      // Interrupted in the verdict: the complete grid is kept; a resumed run computes only the verdict.
      summary.interrupted = true;
      output::write_file(partial, sc, plan, data, prov, false);
      summary.file = partial;
    }
  }
  for (const auto& t : data.protocols)
    for (std::size_t i = 0; i < t.points.size(); ++i)
      if (t.done[i] && !has_figures(t.points[i].status)) ++summary.failed_points;
  summary.seconds = std::chrono::duration<double>(Clock::now() - t0).count();
  summary.data = std::move(data);
  return summary;
}

}  // namespace heraldry::run
