// `heraldry tune`: the tunable parameters of one protocol optimised at one distance.
// Every evaluation is one point through sweep::resolve + point::evaluate.
#include "heraldry/tune.hpp"

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <mutex>
#include <cstdio>
#include <limits>

#include <boost/math/tools/minima.hpp>

#include "heraldry/gaussian.hpp"
#include "heraldry/point.hpp"
#include "heraldry/sweep.hpp"
#include "scenario/suggest.hpp"

namespace heraldry::tune {

namespace {

constexpr double minus_infinity = -std::numeric_limits<double>::infinity();

std::string number_text(double x) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.10g", x);
  return buf;
}

std::string quoted(std::string_view s) { return "\"" + std::string(s) + "\""; }

// The full name of a step parameter, as scenario messages, --set and the result file write it.
std::string file_key(const scenario::Protocol& protocol, std::size_t step, std::string_view key) {
  return protocol.name + ":" + protocol.steps[step].label + "." + std::string(key);
}

// The scenario with only protocol p, every swept parameter of it (and of the counters) pinned
// to its first value, so that its plan has the distance as its only axis.
scenario::Scenario pinned(const scenario::Scenario& sc, std::size_t p) {
  scenario::Scenario w = sc;
  w.protocols = {sc.protocols.at(p)};
  for (auto& step : w.protocols[0].steps)
    for (auto& param : step.params) param.values = {param.first()};
  for (auto& c : w.counters) {
    c.efficiency.values = {c.efficiency.first()};
    c.dark_per_gate.values = {c.dark_per_gate.first()};
    if (c.dark_rate_hz) c.dark_rate_hz->values = {c.dark_rate_hz->first()};
  }
  w.settings.clear();  // swept hardware at its first value (the scenario's structs hold it)
  return w;
}

// Evaluates settings of the knobs on a pinned scenario; counts the evaluations. Thread-safe:
// each call works on its own copy of the pinned scenario.
class Evaluator {
public:
  Evaluator(const scenario::Scenario& sc, const Options& options, std::size_t protocol, double distance_m,
            std::span<const Knob> knobs)
      : w_(pinned(sc, protocol)), options_(options), d_(distance_m), knobs_(knobs.begin(), knobs.end()),
        t0_(std::chrono::steady_clock::now()) {}

  /// At the search tolerance.
  Figures operator()(std::span<const double> values) const {
    return evaluate(values, options_.exact_search ? w_.numerics.tolerance : search_tolerance(w_.numerics.tolerance));
  }
  /// At the scenario's own tolerance.
  Figures exact(std::span<const double> values) const { return evaluate(values, w_.numerics.tolerance); }

  std::size_t count() const { return count_.load(); }
  void expect(std::size_t n) { expected_ = n; }

private:
  Figures evaluate(std::span<const double> values, double tolerance) const {
    if (values.size() != knobs_.size()) throw std::invalid_argument("tune: one value per tunable parameter");
    scenario::Scenario w = w_;
    for (std::size_t i = 0; i < knobs_.size(); ++i) {
      const Knob& k = knobs_[i];
      if (k.step < 0)
        w.source.squeezing_r = squeezing_parameter_from_db(values[i]);
      else
        w.protocols[0].steps[static_cast<std::size_t>(k.step)].params[static_cast<std::size_t>(k.param)].values = {
            values[i]};
    }
    w.numerics.tolerance = tolerance;
    const sweep::Plan plan = sweep::make_plan(w);
    const std::vector<std::size_t> index(plan.protocols[0].axes.size(), 0);
    const point::PointResult r = sweep::evaluate_point(w, plan, 0, index, d_);
    const std::size_t done = ++count_;
    if (options_.progress) {
      const std::lock_guard<std::mutex> lock(progress_mutex_);
      options_.progress(done, std::max(expected_, done),
                        std::chrono::duration<double>(std::chrono::steady_clock::now() - t0_).count());
    }

    Figures f;
    static_cast<point::PointResult&>(f) = r;
    f.objective = minus_infinity;
    if (!has_figures(r.status)) return f;
    f.feasible = (!options_.min_rate_hz || f.heralding_rate_hz >= *options_.min_rate_hz) &&
                 (!options_.max_false_herald_fraction ||
                  f.false_herald_fraction <= *options_.max_false_herald_fraction);
    if (!f.feasible) return f;
    switch (options_.objective) {
      case Objective::fidelity: f.objective = f.fidelity; break;
      case Objective::log_negativity: f.objective = f.log_negativity; break;
      case Objective::rate: f.objective = f.heralding_rate_hz * f.log_negativity; break;
    }
    return f;
  }

  scenario::Scenario w_;
  Options options_;
  double d_;
  std::vector<Knob> knobs_;
  std::chrono::steady_clock::time_point t0_;
  std::size_t expected_ = 0;
  mutable std::atomic<std::size_t> count_{0};
  mutable std::mutex progress_mutex_;
};

// The best point found so far.
struct Point {
  std::vector<double> x;
  Figures f;
};

// Brent's method needs finite values: an infeasible point is worse than any feasible one.
constexpr double infeasible_cost = 1e30;
// Bits of Brent's x tolerance: 2^(1-20) ~ 2e-6 relative; finer is below the figures' own
// truncation noise at the usual tolerances.
constexpr int brent_bits = 20;

// Maximises along coordinate i within [a, b] from `best` (whose value is kept if Brent's
// candidate is not better).
void line_search(const Evaluator& eval, Point& best, std::size_t i, double a, double b) {
  if (!(b > a)) return;
  std::vector<double> x = best.x;
  Figures last;
  double last_x = std::nan("");
  auto cost = [&](double xi) {
    x[i] = xi;
    last = eval(x);
    last_x = xi;
    return last.feasible ? -last.objective : infeasible_cost;
  };
  std::uintmax_t max_iter = 60;
  const auto [xm, fm] = boost::math::tools::brent_find_minima(cost, a, b, brent_bits, max_iter);
  if (!(fm < infeasible_cost)) return;
  if (!(-fm > best.f.objective)) return;
  Figures f = last;
  if (last_x != xm) {
    x[i] = xm;
    f = eval(x);
  }
  if (f.feasible && f.objective > best.f.objective) {
    best.x = x;
    best.x[i] = xm;
    best.f = f;
  }
}

// Evaluates the points in parallel (independent evaluations, each its own slot).
std::vector<Figures> evaluate_all(const Evaluator& eval, const std::vector<std::vector<double>>& xs, int threads) {
  std::vector<Figures> out(xs.size());
  std::vector<std::size_t> todo(xs.size());
  for (std::size_t j = 0; j < todo.size(); ++j) todo[j] = j;
  sweep::dispatch(todo, threads, [&](std::size_t j) { out[j] = eval(xs[j]); }, {}, {});
  return out;
}

Point optimise_one(const Evaluator& eval, const Knob& k, int threads) {
  constexpr int scan = 9;
  Point best{{k.lo}, {}};
  best.f.objective = minus_infinity;
  int at = -1;
  std::vector<double> xs(scan);
  std::vector<std::vector<double>> points;
  for (int j = 0; j < scan; ++j) {
    xs[j] = j + 1 == scan ? k.hi : k.lo + (k.hi - k.lo) * j / (scan - 1);
    points.push_back({xs[j]});
  }
  const std::vector<Figures> fs = evaluate_all(eval, points, threads);
  for (int j = 0; j < scan; ++j) {
    const Figures& f = fs[static_cast<std::size_t>(j)];
    if (f.feasible && f.objective > best.f.objective) {
      best = {points[static_cast<std::size_t>(j)], f};
      at = j;
    }
  }
  if (at < 0) return best;
  line_search(eval, best, 0, xs[std::max(at - 1, 0)], xs[std::min(at + 1, scan - 1)]);
  return best;
}

Point optimise_many(const Evaluator& eval, std::span<const Knob> knobs, int threads) {
  const std::size_t n = knobs.size();
  const std::size_t m = n == 3 ? 3 : 5;
  std::size_t total = 1;
  for (std::size_t i = 0; i < n; ++i) total *= m;
  Point best{std::vector<double>(n), {}};
  best.f.objective = minus_infinity;
  std::vector<std::vector<double>> grid;
  for (std::size_t flat = 0; flat < total; ++flat) {
    std::vector<double> x(n);
    std::size_t rest = flat;
    for (std::size_t i = n; i-- > 0;) {
      const std::size_t j = rest % m;
      rest /= m;
      x[i] = j + 1 == m ? knobs[i].hi : knobs[i].lo + (knobs[i].hi - knobs[i].lo) * static_cast<double>(j) / static_cast<double>(m - 1);
    }
    grid.push_back(std::move(x));
  }
  const std::vector<Figures> fs = evaluate_all(eval, grid, threads);
  for (std::size_t flat = 0; flat < total; ++flat)
    if (fs[flat].feasible && fs[flat].objective > best.f.objective) best = {grid[flat], fs[flat]};
  if (!best.f.feasible) return best;

  // Cyclic coordinate search: each line search spans +-h around the current value; a minimum
  // on an inner edge of that bracket moves the bracket on (up to a few times); h halves after
  // every sweep.
  std::vector<double> h(n);
  for (std::size_t i = 0; i < n; ++i) h[i] = (knobs[i].hi - knobs[i].lo) / static_cast<double>(m - 1);
  constexpr int max_sweeps = 12, max_moves = 6;
  for (int sweep = 0; sweep < max_sweeps; ++sweep) {
    const double before = best.f.objective;
    for (std::size_t i = 0; i < n; ++i) {
      for (int move = 0; move < max_moves; ++move) {
        const double a = std::max(knobs[i].lo, best.x[i] - h[i]);
        const double b = std::min(knobs[i].hi, best.x[i] + h[i]);
        line_search(eval, best, i, a, b);
        const double edge_tol = 1e-3 * h[i];
        const bool on_inner_edge = (a > knobs[i].lo && best.x[i] - a < edge_tol) ||
                                   (b < knobs[i].hi && b - best.x[i] < edge_tol);
        if (!on_inner_edge) break;
      }
    }
    if (std::abs(best.f.objective - before) <= 1e-6 * std::abs(best.f.objective)) break;
    for (std::size_t i = 0; i < n; ++i) h[i] = std::max(0.5 * h[i], 1e-3 * (knobs[i].hi - knobs[i].lo));
  }
  return best;
}

}  // namespace

double search_tolerance(double scenario_tolerance) { return std::max(scenario_tolerance, 1e-6); }

const char* to_string(Objective objective) {
  switch (objective) {
    case Objective::fidelity: return "fidelity";
    case Objective::log_negativity: return "log-negativity";
    case Objective::rate: return "rate";
  }
  return "unknown";
}

const char* units(Objective objective) {
  switch (objective) {
    case Objective::fidelity: return "1";
    case Objective::log_negativity: return "ebit";
    case Objective::rate: return "ebit/s";
  }
  return "";
}

Objective objective_from_string(std::string_view name) {
  for (Objective o : {Objective::fidelity, Objective::log_negativity, Objective::rate})
    if (name == to_string(o)) return o;
  const auto near = scenario::detail::closest(name, {"fidelity", "log-negativity", "rate"});
  throw InputError("--objective", 0, "--objective", quoted(name), "\"fidelity\", \"log-negativity\" or \"rate\"",
                   near ? "did you mean \"" + *near + "\"?" : std::string());
}

std::vector<Knob> knobs(const scenario::Scenario& sc, std::size_t protocol) {
  std::vector<Knob> out;
  if (sc.source.squeezing_r_tune)
    out.push_back({"source.squeezing_db", "dB", "two-mode squeezing at the source",
                   squeezing_db_from_parameter(sc.source.squeezing_r_tune->first),
                   squeezing_db_from_parameter(sc.source.squeezing_r_tune->second), -1, -1});
  const scenario::Protocol& p = sc.protocols.at(protocol);
  for (std::size_t s = 0; s < p.steps.size(); ++s) {
    const scenario::Step& step = p.steps[s];
    for (std::size_t k = 0; k < step.params.size(); ++k) {
      const scenario::Param& param = step.params[k];
      if (!param.tune) continue;
      const steps::ParamSchema& ps = step.type->params[k];
      out.push_back({step.label + "." + std::string(ps.key), std::string(ps.units),
                     std::string(step.type->name) + " on mode " + to_string(step.mode) + ": " + std::string(ps.key),
                     param.tune->first, param.tune->second, static_cast<int>(s), static_cast<int>(k)});
    }
  }
  return out;
}

std::size_t find_protocol(const scenario::Scenario& sc, std::string_view name) {
  std::vector<std::string_view> names;
  for (std::size_t i = 0; i < sc.protocols.size(); ++i) {
    if (sc.protocols[i].name == name) return i;
    names.push_back(sc.protocols[i].name);
  }
  std::string list;
  for (std::size_t i = 0; i < names.size(); ++i) list += (i ? ", " : "") + quoted(names[i]);
  const auto near = scenario::detail::closest(name, names);
  throw InputError("--protocol", 0, "--protocol", quoted(name), "the name of a protocol of the scenario: " + list,
                   near ? "did you mean \"" + *near + "\"?" : std::string());
}

std::size_t check(const scenario::Scenario& sc, const Options& options) {
  if (options.at_m && !(*options.at_m >= 0.0 && std::isfinite(*options.at_m)))
    throw InputError("--at", 0, "--at", number_text(*options.at_m), "a distance in metres >= 0");
  if (options.min_rate_hz && !(*options.min_rate_hz >= 0.0 && std::isfinite(*options.min_rate_hz)))
    throw InputError("--min-rate-hz", 0, "--min-rate-hz", number_text(*options.min_rate_hz), "a rate in Hz >= 0");
  if (options.max_false_herald_fraction &&
      !(*options.max_false_herald_fraction >= 0.0 && *options.max_false_herald_fraction <= 1.0))
    throw InputError("--max-false-herald-fraction", 0, "--max-false-herald-fraction",
                     number_text(*options.max_false_herald_fraction), "a fraction in [0, 1]");
  const std::size_t p = find_protocol(sc, options.protocol);
  const std::vector<Knob> ks = knobs(sc, p);
  if (ks.empty()) {
    std::string keys = "source.squeezing_db";
    const scenario::Protocol& proto = sc.protocols[p];
    for (std::size_t s = 0; s < proto.steps.size(); ++s)
      for (const auto& ps : proto.steps[s].type->params)
        if (ps.type == steps::ParamSchema::Type::number) keys += ", " + file_key(proto, s, ps.key);
    throw InputError(sc.path, 0, "--protocol", quoted(options.protocol),
                     "a protocol with a parameter written { tune = [lo, hi] }",
                     "its tunable keys: " + keys);
  }
  if (ks.size() > 3) {
    std::string names;
    for (const auto& k : ks) names += (names.empty() ? "" : ", ") + k.name;
    throw InputError(sc.path, 0, "--protocol", quoted(options.protocol),
                     "at most three tunable parameters (found " + std::to_string(ks.size()) + ": " + names + ")",
                     "give the others a number");
  }
  return p;
}

Figures evaluate_at(const scenario::Scenario& sc, const Options& options, std::size_t protocol, double distance_m,
                    std::span<const Knob> knobs, std::span<const double> values) {
  Evaluator eval(sc, options, protocol, distance_m, knobs);
  return eval.exact(values);
}

Result run(const scenario::Scenario& sc, const Options& options) {
  const std::size_t p = check(sc, options);
  Result res;
  res.protocol = sc.protocols[p].name;
  res.objective = options.objective;
  res.distance_m = options.at_m ? *options.at_m : sc.link.target_m;
  res.knobs = knobs(sc, p);

  Evaluator eval(sc, options, p, res.distance_m, res.knobs);
  // Expected evaluations (for the progress estimate): the first scan or grid, about ten per
  // line search, two sweeps, the sensitivity and the final evaluation.
  const std::size_t nk = res.knobs.size();
  const std::size_t first = nk == 1 ? 9 : nk == 2 ? 25 : 27;
  eval.expect(first + (nk == 1 ? 12 : 2 * 10 * nk) + 2 * nk + 1);
  const int threads = std::max(1, options.threads);
  Point best = nk == 1 ? optimise_one(eval, res.knobs[0], threads) : optimise_many(eval, res.knobs, threads);
  // The optimum's figures at the scenario's own tolerance.
  if (best.f.feasible) best.f = eval.exact(best.x);
  res.feasible = best.f.feasible;
  res.best = best.x;
  res.at_best = best.f;

  if (res.feasible) {
    for (std::size_t i = 0; i < res.knobs.size(); ++i) {
      const Knob& k = res.knobs[i];
      Sensitivity s;
      std::vector<double> x = best.x;
      s.minus_value = x[i] = std::clamp(0.95 * best.x[i], k.lo, k.hi);
      s.minus_objective = eval(x).objective;
      s.plus_value = x[i] = std::clamp(1.05 * best.x[i], k.lo, k.hi);
      s.plus_objective = eval(x).objective;
      res.sensitivity.push_back(s);
    }
  }
  res.evaluations = eval.count();

  // The bare link with the source of the optimum (its squeezing, if tuned).
  point::Source source = sweep::source_of(sc);
  for (std::size_t i = 0; i < res.knobs.size(); ++i)
    if (res.knobs[i].step < 0 && res.feasible) source.squeezing_r = squeezing_parameter_from_db(res.best[i]);
  const auto bare = point::bare_state(source, sc.link.model, res.distance_m);
  res.bare_log_negativity = gaussian::log_negativity(bare);
  res.bare_fidelity = gaussian::fidelity(bare);
  return res;
}

}  // namespace heraldry::tune
