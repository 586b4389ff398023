// The estimate of a run's time (`heraldry check`): the cost model of the run's point order,
// calibrated per protocol by timing a few representative points.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <exception>
#include <numeric>
#include <time.h>
#include <vector>

#include "heraldry/run.hpp"
#include "run/cost_model.hpp"

namespace heraldry::run {

namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

// CPU time of the calling thread: what a point costs whatever else the machine runs.
double thread_cpu_seconds() {
  timespec ts{};
  ::clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

// The CPU time of one evaluation of a job: repeated (up to 5 times, within `left` seconds) when it is
// below 5 ms, so the clock's resolution and a cold cache do not dominate.
double time_job(const scenario::Scenario& sc, const sweep::Plan& plan, const sweep::Job& job, double left) {
  const std::vector<std::size_t> index = plan.protocols[job.first].unflatten(job.second);
  const point::PointSpec spec = sweep::resolve(sc, plan, job.first, index);
  const auto t0 = Clock::now();
  const double c0 = thread_cpu_seconds();
  int n = 0;
  double t = 0.0;
  do {
    (void)point::evaluate(spec);
    ++n;
    t = thread_cpu_seconds() - c0;
  } while (n < 5 && t / n < 5e-3 && seconds_since(t0) < left);
  return t / n;
}

}  // namespace

double Estimate::seconds(int threads, int ranks) const {
  const double t = std::max(1, threads), k = std::max(1, ranks);
  const double crossings_parallel = std::max<double>(1.0, std::min<double>(t, static_cast<double>(verdict_crossing_jobs)));
  return sweep_cpu_seconds / (t * k) + (verdict_cpu_seconds - verdict_crossings_cpu_seconds) / t +
         verdict_crossings_cpu_seconds / crossings_parallel;
}

Estimate estimate(const scenario::Scenario& sc, double budget_seconds) {
  const auto t0 = Clock::now();
  const sweep::Plan plan = sweep::make_plan(sc);
  const std::size_t np = plan.protocols.size();
  std::vector<sweep::Job> jobs;
  for (std::size_t p = 0; p < np; ++p)
    for (std::size_t i = 0; i < plan.protocols[p].size(); ++i) jobs.emplace_back(p, i);
  const std::vector<double> cost = detail::job_costs(sc, plan, jobs);

  // Per protocol: its jobs by increasing cost, and its total cost.
  std::vector<std::vector<std::size_t>> of(np);
  std::vector<double> total(np, 0.0);
  for (std::size_t j = 0; j < jobs.size(); ++j) {
    of[jobs[j].first].push_back(j);
    total[jobs[j].first] += cost[j];
  }
  for (auto& list : of) std::stable_sort(list.begin(), list.end(), [&](std::size_t a, std::size_t b) { return cost[a] < cost[b]; });
  std::vector<std::size_t> by_total(np);
  std::iota(by_total.begin(), by_total.end(), std::size_t{0});
  std::stable_sort(by_total.begin(), by_total.end(), [&](std::size_t a, std::size_t b) { return total[a] > total[b]; });

  Estimate e;
  e.points = jobs.size();
  // Seconds per unit of modelled cost, per protocol (protocols differ in what a step costs: a
  // Gaussian-only protocol is far cheaper than its step count says; and the swept parameters,
  // which the model does not see, change the cost too). Each protocol's cheapest point first,
  // then points spread over its grid (a golden-ratio sequence over the flat index, so every
  // swept axis is sampled) while its share of the budget (in proportion to its modelled cost)
  // lasts; the scale is their total time over their total cost. A protocol left untimed when
  // the budget is spent takes the largest scale measured: an upper estimate.
  double grand_total = 0.0;
  for (double t : total) grand_total += t;
  std::vector<double> sum_t(np, 0.0), sum_c(np, 0.0);
  auto sample = [&](std::size_t p, std::size_t j) {
    try {
      sum_t[p] += time_job(sc, plan, jobs[j], budget_seconds - seconds_since(t0));
      sum_c[p] += cost[j];
      ++e.timed_points;
    } catch (const std::exception&) {
      // the run reports such a point itself
    }
  };
  // 1. Every protocol's cheapest point, the most expensive protocols first.
  for (std::size_t p : by_total)
    if (!of[p].empty() && (p == by_total.front() || seconds_since(t0) < budget_seconds)) sample(p, of[p].front());
  // 2. Points spread over each protocol's grid while its share of what is left lasts.
  const double left = budget_seconds - seconds_since(t0);
  for (std::size_t p : by_total) {
    if (of[p].size() < 2 || sum_c[p] <= 0.0) continue;
    const auto tp = Clock::now();
    const double share = grand_total > 0.0 ? left * total[p] / grand_total : 0.0;
    std::vector<std::size_t> flat(of[p]);  // the protocol's jobs in flat order (of[p] is by cost)
    std::sort(flat.begin(), flat.end());
    const std::size_t n = flat.size();
    for (std::size_t k = 0; k < 64 && seconds_since(tp) < share; ++k) {
      const double u = std::fmod(0.5 + 0.6180339887498949 * static_cast<double>(k), 1.0);
      const std::size_t j = flat[std::min(n - 1, static_cast<std::size_t>(u * static_cast<double>(n)))];
      if (sum_t[p] / sum_c[p] * cost[j] > budget_seconds - seconds_since(t0)) break;
      sample(p, j);
    }
  }
  std::vector<double> scale(np, -1.0);
  double largest_scale = 0.0;
  for (std::size_t p = 0; p < np; ++p)
    if (sum_c[p] > 0.0) {
      scale[p] = sum_t[p] / sum_c[p];
      largest_scale = std::max(largest_scale, scale[p]);
    }
  for (double& s : scale)
    if (s < 0.0) s = largest_scale;

  // The verdict: every setting (the grid's points of one distance) at the target, where the
  // cost is that of the grid distance nearest it; 3 crossings x 8 evaluations each (TOMS 748 to
  // 1e-4 of a grid step from a bracket of one step) at the protocol's median cost.
  const auto& grid = sc.link.distances_m;
  std::size_t near = 0;
  for (std::size_t i = 0; i < grid.size(); ++i)
    if (std::abs(grid[i] - sc.link.target_m) < std::abs(grid[near] - sc.link.target_m)) near = i;
  for (std::size_t p = 0; p < np; ++p) {
    for (std::size_t j : of[p]) {
      e.sweep_cpu_seconds += scale[p] * cost[j];
      if (plan.protocols[p].unflatten(jobs[j].second)[0] == near) e.verdict_cpu_seconds += scale[p] * cost[j];
    }
    if (grid.size() > 1 && !of[p].empty()) {
      const double crossings = 3.0 * 8.0 * scale[p] * cost[of[p][of[p].size() / 2]];
      e.verdict_cpu_seconds += crossings;
      e.verdict_crossings_cpu_seconds += crossings;
      e.verdict_crossing_jobs += 3;
    }
  }
  e.timing_seconds = seconds_since(t0);
  return e;
}

}  // namespace heraldry::run
