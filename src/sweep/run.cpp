// The main job: grid, checkpoint/resume, dispatch, verdict, final file.
#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <exception>
#include <filesystem>
#include <functional>
#include <limits>
#include <optional>
#include <sstream>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/run.hpp"
#include "sweep/mpi_run.hpp"

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

gaussian::StandardForm bare_state(const scenario::Scenario& sc, double distance_m) {
  const link::LinkBudget b = link::link_budget(sc.link.model, distance_m);
  auto s = gaussian::tmst(squeezing_parameter_from_db(sc.source.squeezing_db), sc.source.thermal_photons);
  s = gaussian::apply(s, Mode::A, b.a.channel);
  return gaussian::apply(s, Mode::B, b.b.channel);
}

// Signed log-negativity -log2 nu~_- (negative when separable): smooth through the threshold,
// so root finding can refine where E_N vanishes.
double bare_signed_log_negativity(const scenario::Scenario& sc, double d) {
  return -std::log2(gaussian::smallest_pt_symplectic(bare_state(sc, d)));
}

bool usable(const steps::PointResult& r) { return r.status == Status::ok; }

// One grid point and its heralding rate. Trial rates depend only on the counter settings, not
// the distance: computed per point anyway (cheap) so that swept counter parameters are honoured.
detail::Outcome evaluate_point(const scenario::Scenario& sc, const sweep::Plan& plan, const detail::Job& job) {
  const auto [p, flat] = job;
  const auto idx = plan.protocols[p].unflatten(flat);
  const steps::PointSpec spec = sweep::resolve(sc, plan, p, idx);
  detail::Outcome o{job, steps::evaluate(spec), 0.0};
  const double rate = steps::trial_rate_hz(sc.source.bandwidth_hz, steps::counters_used(spec.steps, spec.counters));
  o.heralding_rate_hz = o.result.status == Status::ok ? rate * o.result.success_probability : 0.0;
  return o;
}

// An MPI rank > 0: evaluates the batches rank 0 hands out; no files. An error here is reported
// to rank 0 with the first batch (rank 0 waits for every rank's request before it can return).
Summary serve_rank(const scenario::Scenario& sc, const Options& options) {
  const auto t0 = Clock::now();
  Summary summary;
  summary.worker = true;
  summary.ranks = detail::rank_count();
  summary.threads = sweep::thread_count(options.threads > 0 ? options.threads : sc.numerics.threads);
  std::optional<sweep::Plan> plan;
  std::exception_ptr failure;
  try {
    plan = sweep::make_plan(sc);
    summary.total_points = plan->total_points();
  } catch (...) {
    failure = std::current_exception();
  }
  detail::serve(
      summary.threads,
      [&](const detail::Job& job) {
        if (failure) std::rethrow_exception(failure);
        return evaluate_point(sc, *plan, job);
      },
      [] { return stop_requested.load(); });
  summary.seconds = std::chrono::duration<double>(Clock::now() - t0).count();
  return summary;
}

// Rank 0 of an MPI run: whatever way execute() ends, no other rank is left waiting for work.
struct ReleaseRanks {
  ReleaseRanks() { detail::expect_workers(); }
  ~ReleaseRanks() { detail::release_workers(); }
  ReleaseRanks(const ReleaseRanks&) = delete;
  ReleaseRanks& operator=(const ReleaseRanks&) = delete;
};

// One line in words: does the protocol pay off at the target, and at what rate?
std::string summarise(const sweep::ProtocolPlan& pp, const verdict::ProtocolVerdict& pv, const steps::PointResult& best,
                      const verdict::Verdict& v) {
  std::ostringstream line;
  line.precision(3);
  const double target = v.target_m;
  if (!usable(best)) {
    line << "no verdict at " << target << " m: " << to_string(best.status);
    if (best.status == Status::truncation_budget_missed) line << " (needs cutoff " << best.cutoff_needed << ")";
    return line.str();
  }
  const bool is_bare = pp.axes.size() == 1 && std::abs(best.success_probability - 1.0) < 1e-12;
  if (is_bare) {
    line << "no heralding: this is the link itself (E_N " << best.log_negativity << ", F " << best.fidelity << ")";
    return line.str();
  }
  line << (pv.pays_off_log_negativity ? "pays off" : "does not pay off") << " at " << target << " m: E_N "
       << best.log_negativity << " vs " << v.bare_log_negativity << " bare, F " << best.fidelity << " vs "
       << v.bare_fidelity << " bare";
  if (pv.pays_off_log_negativity && !pv.pays_off_fidelity) line << " (entanglement up, teleportation fidelity not)";
  if (!pv.pays_off_log_negativity && pv.pays_off_fidelity) line << " (fidelity up, entanglement not)";
  line << "; " << pv.heralding_rate_hz << " heralded pairs/s";
  line.precision(2);
  line << ", " << 100.0 * pv.false_herald_fraction << "% false heralds";
  line.precision(3);
  if (v.relay_log_negativity && *v.relay_log_negativity > best.log_negativity)
    line << "; a midpoint relay would do better (E_N " << *v.relay_log_negativity << ")";
  return line.str();
}

}  // namespace

void request_stop() { stop_requested.store(true); }

gaussian::StandardForm relay_state(const scenario::Scenario& sc, double distance_m) {
  if (sc.link.model.direct) throw std::logic_error("relay_state: measured channels cannot be split at a midpoint");
  link::LinkModel arm = sc.link.model;
  arm.geometry = link::Geometry::one_way;
  const link::LinkBudget half = link::link_budget(arm, 0.5 * distance_m);
  const auto source = gaussian::tmst(squeezing_parameter_from_db(sc.source.squeezing_db), sc.source.thermal_photons);
  const auto pair = gaussian::apply(source, Mode::B, half.b.channel);
  return gaussian::swap(pair, pair);
}

output::LinkTable link_table(const scenario::Scenario& sc) {
  output::LinkTable t;
  for (double d : sc.link.distances_m) {
    const link::LinkBudget b = link::link_budget(sc.link.model, d);
    const auto s = bare_state(sc, d);
    t.transmissivity_a.push_back(b.a.channel.transmissivity);
    t.transmissivity_b.push_back(b.b.channel.transmissivity);
    t.bath_photons_a.push_back(b.a.channel.bath_photons);
    t.bath_photons_b.push_back(b.b.channel.bath_photons);
    t.negativity.push_back(gaussian::negativity(s));
    t.log_negativity.push_back(gaussian::log_negativity(s));
    t.fidelity.push_back(gaussian::fidelity(s));
    double plob = gaussian::plob_bound(b.b.channel), rci = gaussian::rci_bound(b.b.channel);
    if (sc.link.model.geometry == link::Geometry::midpoint) {
      // Each arm is a cut between the receivers: the weaker arm bounds the pair.
      plob = std::min(plob, gaussian::plob_bound(b.a.channel));
      rci = std::min(rci, gaussian::rci_bound(b.a.channel));
    }
    // A lossless path has an unbounded capacity; the file stores the largest double instead of inf.
    t.plob_ebits.push_back(std::isinf(plob) ? std::numeric_limits<double>::max() : plob);
    t.rci_ebits.push_back(std::isinf(rci) ? std::numeric_limits<double>::max() : rci);
    if (!sc.link.model.direct) {
      const auto relay = relay_state(sc, d);
      t.relay_log_negativity.push_back(gaussian::log_negativity(relay));
      t.relay_fidelity.push_back(gaussian::fidelity(relay));
    }
  }
  return t;
}

verdict::Verdict compute_verdict(const scenario::Scenario& sc, const sweep::Plan& plan, const output::RunData& data,
                                 int threads) {
  verdict::Verdict v;
  const auto& grid = sc.link.distances_m;
  v.target_m = sc.link.target_m;
  const auto target_state = bare_state(sc, v.target_m);
  v.bare_log_negativity = gaussian::log_negativity(target_state);
  v.bare_fidelity = gaussian::fidelity(target_state);
  if (!sc.link.model.direct) {
    const auto relay = relay_state(sc, v.target_m);
    v.relay_log_negativity = gaussian::log_negativity(relay);
    v.relay_fidelity = gaussian::fidelity(relay);
  }
  if (grid.size() > 1) {
    // The bare link is Gaussian and instant: crossings beyond the grid are found by scanning on.
    const std::function<double(double)> en = [&](double d) { return bare_signed_log_negativity(sc, d); };
    const std::function<double(double)> fh = [&](double d) { return gaussian::fidelity(bare_state(sc, d)) - 0.5; };
    v.survival = last_downward_crossing(en, grid);
    if (v.survival.kind == Crossing::Kind::beyond_grid) v.survival = continue_crossing(en, grid.back(), 1e7);
    v.fidelity_half = last_downward_crossing(fh, grid);
    if (v.fidelity_half.kind == Crossing::Kind::beyond_grid) v.fidelity_half = continue_crossing(fh, grid.back(), 1e7);
  }
  const std::size_t np = plan.protocols.size();
  v.protocols.resize(np);

  // 1. Every setting of the swept parameters of every protocol, evaluated at the target
  //    distance (in parallel); each protocol keeps the setting with the largest E_N.
  struct TargetJob {
    std::size_t protocol;
    std::vector<std::size_t> index;
    steps::PointResult result;
  };
  std::vector<TargetJob> target_jobs;
  for (std::size_t p = 0; p < np; ++p) {
    const sweep::ProtocolPlan& pp = plan.protocols[p];
    const std::size_t slice = pp.size() / pp.axes[0].values.size();
    for (std::size_t s = 0; s < slice; ++s) target_jobs.push_back({p, pp.unflatten(s), {}});
  }
  std::vector<std::size_t> todo(target_jobs.size());
  for (std::size_t j = 0; j < todo.size(); ++j) todo[j] = j;
  sweep::dispatch(todo, threads,
                  [&](std::size_t j) {
                    target_jobs[j].result =
                        steps::evaluate(sweep::resolve(sc, plan, target_jobs[j].protocol, target_jobs[j].index, v.target_m));
                  },
                  {}, {});
  std::vector<std::vector<std::size_t>> best_index(np);
  std::vector<steps::PointResult> best(np);
  std::vector<bool> have(np, false);
  for (const TargetJob& job : target_jobs) {
    const std::size_t p = job.protocol;
    const steps::PointResult& r = job.result;
    if (!have[p] || (usable(r) && (!usable(best[p]) || r.log_negativity > best[p].log_negativity))) {
      best[p] = r;
      best_index[p] = job.index;
      have[p] = true;
    }
  }

  // 2. Crossings along distance with each protocol's best setting held fixed: grid values from
  //    the run, refined between grid points by fresh evaluations. Three per protocol, in parallel.
  enum Figure { en_vs_bare = 0, f_vs_bare = 1, f_vs_half = 2 };
  std::vector<Crossing> crossings(3 * np);
  if (grid.size() > 1) {
    const double step = (grid.back() - grid.front()) / static_cast<double>(grid.size() - 1);
    const double tol = 1e-4 * std::max(step, 1e-12);
    std::vector<std::size_t> jobs(3 * np);
    for (std::size_t j = 0; j < jobs.size(); ++j) jobs[j] = j;
    sweep::dispatch(jobs, threads,
                    [&](std::size_t j) {
                      const std::size_t p = j / 3;
                      const auto figure = static_cast<Figure>(j % 3);
                      const sweep::ProtocolPlan& pp = plan.protocols[p];
                      const output::ProtocolTable& table = data.protocols.at(p);
                      auto margin = [&](const steps::PointResult& r, double d, std::size_t di, bool from_grid) {
                        if (!usable(r)) return -1.0;
                        switch (figure) {
                          case en_vs_bare:
                            return r.log_negativity - (from_grid ? data.link.log_negativity[di]
                                                                 : gaussian::log_negativity(bare_state(sc, d)));
                          case f_vs_bare:
                            return r.fidelity - (from_grid ? data.link.fidelity[di] : gaussian::fidelity(bare_state(sc, d)));
                          case f_vs_half: return r.fidelity - 0.5;
                        }
                        return -1.0;
                      };
                      std::vector<double> values;
                      for (std::size_t di = 0; di < grid.size(); ++di) {
                        std::vector<std::size_t> idx = best_index[p];
                        idx[0] = di;
                        std::size_t flat = 0;
                        for (std::size_t a = 0; a < idx.size(); ++a) flat = flat * pp.axes[a].values.size() + idx[a];
                        values.push_back(table.done[flat] ? margin(table.points[flat], grid[di], di, true) : -1.0);
                      }
                      auto fn = [&](double d) {
                        return margin(steps::evaluate(sweep::resolve(sc, plan, p, best_index[p], d)), d, 0, false);
                      };
                      crossings[j] = last_downward_crossing(fn, grid, values, tol);
                    },
                    {}, {});
  }

  for (std::size_t p = 0; p < np; ++p) {
    const sweep::ProtocolPlan& pp = plan.protocols[p];
    const output::ProtocolTable& table = data.protocols.at(p);
    verdict::ProtocolVerdict& pv = v.protocols[p];
    pv.name = pp.name;
    for (std::size_t i = 0; i < table.points.size(); ++i)
      if (!table.done[i] || !usable(table.points[i])) ++pv.failed_points;
    const steps::PointResult& b = best[p];
    pv.status = b.status;
    pv.success_probability = b.success_probability;
    pv.log_negativity = b.log_negativity;
    pv.fidelity = b.fidelity;
    pv.false_herald_fraction = b.false_herald_fraction;
    pv.truncation_error = b.truncation_error;
    pv.cutoff = b.cutoff;
    pv.heralding_rate_hz = usable(b) ? sweep::trial_rate_hz(sc, plan, p, best_index[p]) * b.success_probability : 0.0;
    for (std::size_t a = 1; a < pp.axes.size(); ++a) pv.best.emplace_back(pp.axes[a].name, pp.axes[a].values[best_index[p][a]]);
    if (sc.output.heralds_wanted && pv.heralding_rate_hz > 0.0)
      pv.seconds_for_heralds = *sc.output.heralds_wanted / pv.heralding_rate_hz;
    pv.pays_off_log_negativity = usable(b) && b.log_negativity > v.bare_log_negativity;
    pv.pays_off_fidelity = usable(b) && b.fidelity > v.bare_fidelity;
    if (pp.axes.size() > 1) {
      for (std::size_t a = 1; a < pp.axes.size(); ++a) {
        pv.slice_axes.push_back(pp.axes[a].name);
        pv.slice_shape.push_back(pp.axes[a].values.size());
      }
      for (const TargetJob& job : target_jobs) {
        if (job.protocol != p) continue;
        const steps::PointResult& r = job.result;
        const bool ok = usable(r);
        pv.slice_log_negativity.push_back(ok ? r.log_negativity : 0.0);
        pv.slice_fidelity.push_back(ok ? r.fidelity : 0.0);
        pv.slice_success_probability.push_back(ok ? r.success_probability : 0.0);
        pv.slice_heralding_rate_hz.push_back(
            ok ? sweep::trial_rate_hz(sc, plan, p, job.index) * r.success_probability : 0.0);
        pv.slice_false_herald_fraction.push_back(ok ? r.false_herald_fraction : 0.0);
        pv.slice_status.push_back(static_cast<int>(r.status));
      }
    }
    pv.breakeven_log_negativity = crossings[3 * p + en_vs_bare];
    pv.breakeven_fidelity = crossings[3 * p + f_vs_bare];
    pv.fidelity_half = crossings[3 * p + f_vs_half];
    pv.summary = summarise(pp, pv, b, v);
  }
  return v;
}

namespace {

std::string describe_crossing(const Crossing& c) {
  char buf[64];
  switch (c.kind) {
    case Crossing::Kind::crossed: std::snprintf(buf, sizeof buf, "%.4g m", c.distance); break;
    case Crossing::Kind::never_positive: std::snprintf(buf, sizeof buf, "never"); break;
    case Crossing::Kind::beyond_grid: std::snprintf(buf, sizeof buf, "> %.4g m", c.distance); break;
  }
  return buf;
}

}  // namespace

std::string format_verdict(const scenario::Scenario& sc, const verdict::Verdict& v) {
  std::ostringstream out;
  char buf[512];
  std::snprintf(buf, sizeof buf, "Verdict at the target distance %.4g m (%s)\n", v.target_m, sc.title.c_str());
  out << buf;
  std::snprintf(buf, sizeof buf, "  bare link: E_N %.4f ebit, fidelity %.4f; entanglement survives to %s, fidelity > 1/2 to %s\n",
                v.bare_log_negativity, v.bare_fidelity, describe_crossing(v.survival).c_str(),
                describe_crossing(v.fidelity_half).c_str());
  out << buf;
  if (v.relay_log_negativity)
    out << "  midpoint relay (Gaussian entanglement swapping, ideal Bell measurement): E_N "
        << std::to_string(*v.relay_log_negativity).substr(0, 6) << " ebit, fidelity "
        << std::to_string(*v.relay_fidelity).substr(0, 6) << "\n";
  std::snprintf(buf, sizeof buf, "  %-22s %11s %11s %8s %8s %8s %13s %13s %11s\n", "protocol", "P_success", "rate_Hz",
                "false%", "E_N", "F", "break-even E_N", "break-even F", "F > 1/2 to");
  out << buf;
  for (const auto& p : v.protocols) {
    std::snprintf(buf, sizeof buf, "  %-22.22s %11.4g %11.4g %8.2f %8.4f %8.4f %13s %13s %11s\n", p.name.c_str(),
                  p.success_probability, p.heralding_rate_hz, 100.0 * p.false_herald_fraction, p.log_negativity,
                  p.fidelity, describe_crossing(p.breakeven_log_negativity).c_str(),
                  describe_crossing(p.breakeven_fidelity).c_str(), describe_crossing(p.fidelity_half).c_str());
    out << buf;
  }
  for (const auto& p : v.protocols) {
    out << "  " << p.name << ": " << p.summary;
    if (!p.best.empty()) {
      out << "; best setting:";
      for (const auto& [name, value] : p.best) {
        std::snprintf(buf, sizeof buf, " %s = %.4g", name.c_str(), value);
        out << buf;
      }
    }
    if (p.seconds_for_heralds) {
      std::snprintf(buf, sizeof buf, "; %.4g s for %.4g heralded pairs", *p.seconds_for_heralds, *sc.output.heralds_wanted);
      out << buf;
    }
    if (p.failed_points) out << "; " << p.failed_points << " grid points failed (see status in the file)";
    out << "\n";
  }
  // Two swept parameters (e.g. a counter's efficiency and dark rate): the map of the E_N gain
  // over the bare link at the target, '+' where the stage pays off.
  for (const auto& p : v.protocols) {
    if (p.slice_shape.size() != 2) continue;
    const std::size_t rows = p.slice_shape[0], cols = p.slice_shape[1];
    const sweep::Plan plan = sweep::make_plan(sc);
    const sweep::ProtocolPlan* pp = nullptr;
    for (const auto& q : plan.protocols)
      if (q.name == p.name) pp = &q;
    if (!pp) continue;
    out << "  " << p.name << ": E_N gain over the bare link at " << v.target_m << " m (rows " << p.slice_axes[0]
        << ", columns " << p.slice_axes[1] << "; * pays off)\n";
    std::snprintf(buf, sizeof buf, "  %12s", "");
    out << buf;
    for (std::size_t j = 0; j < cols; ++j) {
      std::snprintf(buf, sizeof buf, " %10.3g", pp->axes[2].values[j]);
      out << buf;
    }
    out << "\n";
    for (std::size_t i = 0; i < rows; ++i) {
      std::snprintf(buf, sizeof buf, "  %12.4g", pp->axes[1].values[i]);
      out << buf;
      for (std::size_t j = 0; j < cols; ++j) {
        const std::size_t k = i * cols + j;
        if (p.slice_status[k] != 0) {
          std::snprintf(buf, sizeof buf, " %10s", "failed");
        } else {
          const double gain = p.slice_log_negativity[k] - v.bare_log_negativity;
          std::snprintf(buf, sizeof buf, " %+9.3f%c", gain, gain > 0.0 ? '*' : ' ');
        }
        out << buf;
      }
      out << "\n";
    }
  }
  return out.str();
}

Summary execute(const scenario::Scenario& sc, const Options& options) {
  namespace fs = std::filesystem;
  stop_requested.store(false);
  const int ranks = detail::rank_count();
  if (ranks > 1 && detail::rank_index() != 0) return serve_rank(sc, options);
  std::optional<ReleaseRanks> release;
  if (ranks > 1) release.emplace();
  const auto t0 = Clock::now();
  Summary summary;
  summary.ranks = ranks;
  summary.file = options.output.empty() ? sc.output.file : options.output;
  const std::string partial = summary.file + ".partial";
  std::error_code ec;
  const bool have_partial = fs::exists(partial, ec);
  if (!have_partial && fs::exists(summary.file, ec) && !options.force)
    throw InputError(sc.path, 0, "output.file", "\"" + summary.file + "\"",
                     "a result file that does not exist yet", "it exists; pass --force to overwrite it");
  if (fs::path(summary.file).has_parent_path()) fs::create_directories(fs::path(summary.file).parent_path(), ec);

  const sweep::Plan plan = sweep::make_plan(sc);
  output::RunData data = output::empty_run(plan);
  if (have_partial) output::read_checkpoint(partial, sc, plan, data);
  data.link = link_table(sc);

  summary.threads = sweep::thread_count(options.threads > 0 ? options.threads : sc.numerics.threads);
  output::Provenance prov{options.version, summary.threads, ranks, utc_now()};

  // Jobs: (protocol, flat index) pairs not done yet, in a fixed order.
  std::vector<std::pair<std::size_t, std::size_t>> jobs;
  for (std::size_t p = 0; p < plan.protocols.size(); ++p)
    for (std::size_t i = 0; i < plan.protocols[p].size(); ++i) {
      ++summary.total_points;
      if (data.protocols[p].done[i])
        ++summary.resumed_points;
      else
        jobs.emplace_back(p, i);
    }
  // Most expensive points first (longest-processing-time order): chunks then hold points of
  // similar cost and the threads rarely wait for one slow point at a chunk boundary. The cost
  // model is the Gaussian cutoff of the bare link at the point's distance, ~N^3.5 per step.
  // The order changes nothing in the results: each point writes its own slot.
  std::vector<double> distance_cost;
  for (double d : sc.link.distances_m) {
    double n = 10.0;
    try {
      n = fock::auto_cutoff_gaussian(bare_state(sc, d), sc.numerics.tolerance * sc.numerics.tolerance, fock::Engine::sector,
                                     1e18);
    } catch (const std::exception&) {
      n = sc.numerics.max_cutoff;
    }
    distance_cost.push_back(std::pow(std::min<double>(n, sc.numerics.max_cutoff), 3.5));
  }
  std::vector<double> cost(jobs.size());
  for (std::size_t j = 0; j < jobs.size(); ++j) {
    const auto [p, flat] = jobs[j];
    const std::size_t di = plan.protocols[p].unflatten(flat)[0];
    cost[j] = distance_cost[di] * static_cast<double>(sc.protocols[p].steps.size());
  }
  std::vector<std::size_t> todo(jobs.size());
  for (std::size_t j = 0; j < todo.size(); ++j) todo[j] = j;
  std::stable_sort(todo.begin(), todo.end(), [&](std::size_t x, std::size_t y) { return cost[x] > cost[y]; });

  auto evaluate_job = [&](std::size_t j) {
    const detail::Outcome o = evaluate_point(sc, plan, jobs[j]);
    data.protocols[o.job.first].points[o.job.second] = o.result;
    data.protocols[o.job.first].heralding_rate_hz[o.job.second] = o.heralding_rate_hz;
  };

  auto last_checkpoint = Clock::now();
  std::size_t computed = 0;
  auto mark_done = [&](std::size_t done) {
    for (std::size_t k = computed; k < done; ++k) data.protocols[jobs[todo[k]].first].done[jobs[todo[k]].second] = 1;
    computed = done;
  };
  auto checkpoint_and_progress = [&](std::size_t done) {
    const double since = std::chrono::duration<double>(Clock::now() - last_checkpoint).count();
    if (since >= options.checkpoint_seconds) {
      output::write_file(partial, sc, plan, data, prov, false);
      last_checkpoint = Clock::now();
    }
    if (options.progress) {
      const double el = std::chrono::duration<double>(Clock::now() - t0).count();
      const double rate = done / std::max(el, 1e-9);
      std::fprintf(stderr, "\r  %zu/%zu points, %.3g points/s, %.0f s left   ", summary.resumed_points + done,
                   summary.total_points, rate, (todo.size() - done) / std::max(rate, 1e-9));
      std::fflush(stderr);
    }
  };
  auto stop = [&]() {
    if (stop_requested.load()) return true;
    return options.stop_after_points > 0 && computed >= options.stop_after_points;
  };
  auto after_chunk = [&](std::size_t done) {
    mark_done(done);
    checkpoint_and_progress(done);
  };
  if (ranks == 1) {
    sweep::dispatch(todo, summary.threads, evaluate_job, stop, after_chunk);
  } else {
    // Rank 0 hands the same cost-ordered jobs to the ranks; results arrive in any order and
    // are stored here, on this thread (the checkpoint writer's).
    std::vector<detail::Job> ordered;
    for (std::size_t j : todo) ordered.push_back(jobs[j]);
    detail::CoordinatorHooks hooks;
    hooks.evaluate = [&](const detail::Job& job) { return evaluate_point(sc, plan, job); };
    hooks.store = [&](const detail::Outcome& o) {
      output::ProtocolTable& t = data.protocols.at(o.job.first);
      t.points.at(o.job.second) = o.result;
      t.heralding_rate_hz[o.job.second] = o.heralding_rate_hz;
      t.done[o.job.second] = 1;
      ++computed;
    };
    hooks.stop = stop;
    hooks.tick = [&] { checkpoint_and_progress(computed); };
    detail::coordinate(ordered, summary.threads, hooks);
  }
  if (options.progress) std::fprintf(stderr, "\n");
  summary.computed_points = computed;

  if (computed < todo.size()) {
    summary.interrupted = true;
    output::write_file(partial, sc, plan, data, prov, false);
    summary.file = partial;
  } else {
    const auto tv = Clock::now();
    data.verdict = compute_verdict(sc, plan, data, summary.threads);
    summary.verdict_seconds = std::chrono::duration<double>(Clock::now() - tv).count();
    output::write_file(summary.file, sc, plan, data, prov, true);
    fs::remove(partial, ec);
  }
  for (const auto& t : data.protocols)
    for (std::size_t i = 0; i < t.points.size(); ++i)
      if (t.done[i] && t.points[i].status != Status::ok) ++summary.failed_points;
  summary.seconds = std::chrono::duration<double>(Clock::now() - t0).count();
  summary.data = std::move(data);
  return summary;
}

}  // namespace heraldry::run
