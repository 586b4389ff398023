// The point evaluator: source, Gaussian prefix, one conversion to Fock space, the remaining
// steps as Kraus sums, the automatic cutoff, the figures of merit and the heralding rate
// (docs/physics.md §0.1).
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <string>

#include "heraldry/gaussian.hpp"
#include "heraldry/measures.hpp"
#include "heraldry/point.hpp"
#include "point/exact.hpp"

namespace heraldry::point {

using steps::CounterModel;
using steps::StepContext;
using steps::StepSpec;
using steps::StepType;
using steps::Weighting;

namespace detail {

StepContext step_context(const PointSpec& spec, const StepSpec& s, Weighting weighting, fock::Workspace* work) {
  StepContext c;
  c.counter = s.type->uses_counter ? &spec.counters[static_cast<std::size_t>(s.counter)] : nullptr;
  c.frequency_hz = mode_frequency_hz(spec.source, s.mode);
  c.link_a = spec.channel_a;
  c.link_b = spec.channel_b;
  c.weighting = weighting;
  c.work = work;
  return c;
}

gaussian::StandardForm gaussian_prefix(const PointSpec& spec, std::size_t& first) {
  gaussian::StandardForm form = source_state(spec.source);
  for (first = 0; first < spec.steps.size(); ++first) {
    const StepSpec& s = spec.steps[first];
    if (!s.type->channels) break;
    const steps::Channels ch = s.type->channels(s, step_context(spec, s, Weighting::full, nullptr));
    if (ch.a) form = gaussian::apply(form, Mode::A, *ch.a);
    if (ch.b) form = gaussian::apply(form, Mode::B, *ch.b);
  }
  return form;
}

}  // namespace detail

namespace {

// Below this a success probability is not a resolvable number in double precision.
constexpr double smallest_probability = 1e-300;
constexpr int max_cutoff_rounds = 40;
// Round-off allowed on the ranges of the figures: a success probability is a sum of O(N^2)
// diagonal elements (relative round-off ~1e-13); E_N, N and F come from eigen-solvers and
// quadratic forms of the normalised state (absolute round-off ~1e-12).
constexpr double probability_slack = 1e-12;
constexpr double measure_slack = 1e-9;
// The smallest truncation budget handed to the cutoff search (tol^2 P may underflow).
constexpr double tiny = 1e-300;

// Range guard: x in [lo, hi] within `slack` (then set to the bound it crossed by round-off);
// false when x is not finite or lies outside by more than round-off, which is a numerical
// breakdown, never a value to clip silently.
bool within(double& x, double lo, double hi, double slack) {
  if (!std::isfinite(x) || x < lo - slack || x > hi + slack) return false;
  x = std::clamp(x, lo, hi);
  return true;
}

[[noreturn]] void fail(const std::string& key, double value, const std::string& expected) {
  const bool integral = std::abs(value) < 1e15 && value == std::floor(value);
  throw InputError("", 0, key, integral ? std::to_string(static_cast<long long>(value)) : std::to_string(value),
                   expected);
}

void check_channel(const link::Channel& c, const std::string& key) {
  if (!(c.transmissivity >= 0.0 && c.transmissivity <= 1.0))
    fail(key + ".transmissivity", c.transmissivity, "a value in [0, 1]");
  if (!(c.bath_photons >= 0.0) || !std::isfinite(c.bath_photons))
    fail(key + ".bath_photons", c.bath_photons, "a finite occupation >= 0");
}


void check_point(const PointSpec& spec) {
  const Source& src = spec.source;
  if (!(src.squeezing_r >= 0.0) || !std::isfinite(src.squeezing_r))
    fail("source.squeezing", src.squeezing_r, "a finite squeezing parameter >= 0");
  if (!(src.thermal_photons >= 0.0) || !std::isfinite(src.thermal_photons))
    fail("source.thermal_photons", src.thermal_photons, "a finite occupation >= 0");
  if (!(src.bandwidth_hz > 0.0) || !std::isfinite(src.bandwidth_hz))
    fail("source.bandwidth", src.bandwidth_hz, "a finite bandwidth > 0");
  check_channel(spec.channel_a, "link.a");
  check_channel(spec.channel_b, "link.b");
  const Numerics& n = spec.numerics;
  if (!(n.tolerance > 0.0 && n.tolerance < 1.0)) fail("numerics.tolerance", n.tolerance, "a value in (0, 1)");
  if (n.cutoff < 0) fail("numerics.cutoff", n.cutoff, "an integer >= 0 (0: auto)");
  if (!(n.max_memory_bytes > 0.0)) fail("numerics.max_memory", n.max_memory_bytes, "a size > 0");
  if (n.max_cutoff < 1) fail("numerics.max_cutoff", n.max_cutoff, "an integer >= 1");
  for (std::size_t i = 0; i < spec.counters.size(); ++i)
    steps::validate(spec.counters[i], "counters[" + std::to_string(i) + "]");
  for (const auto& s : spec.steps) {
    if (s.type == nullptr) throw std::invalid_argument("heraldry::point::evaluate: a step without a kind");
    if (s.values.size() != s.type->params.size())
      throw std::invalid_argument("heraldry::point::evaluate: step '" + std::string(s.type->name) + "' has " +
                                  std::to_string(s.values.size()) + " values for " +
                                  std::to_string(s.type->params.size()) + " parameters");
    if (s.type->uses_counter) {
      if (s.counter < 0 || s.counter >= static_cast<int>(spec.counters.size()))
        fail(std::string(s.type->name) + ".counter", s.counter,
             "the index of one of the " + std::to_string(spec.counters.size()) + " counters of the point");
      if (s.type->check) s.type->check(s, spec.counters[static_cast<std::size_t>(s.counter)], "");
    }
  }
}

bool uses_counters(const std::vector<StepSpec>& steps, std::size_t first) {
  return std::any_of(steps.begin() + static_cast<std::ptrdiff_t>(first), steps.end(),
                     [](const StepSpec& s) { return s.type->uses_counter; });
}

// Dark counts are the only source of counts without photons: without them the genuine weights
// equal the full ones.
bool any_dark_counts(const PointSpec& spec, std::size_t first) {
  for (std::size_t i = first; i < spec.steps.size(); ++i) {
    const auto& s = spec.steps[i];
    if (s.type->uses_counter && spec.counters[static_cast<std::size_t>(s.counter)].dark > 0.0) return true;
  }
  return false;
}

fock::SectorState convert(const gaussian::StandardForm& f, int n, fock::SectorState*) { return fock::sector_state(f, n); }
fock::DenseState convert(const gaussian::StandardForm& f, int n, fock::DenseState*) { return fock::dense_state(f, n); }

// The Gaussian state in Fock space with its ledger set to the trace deficit computed directly
// (a sum of positive terms): 1 - trace has an absolute round-off of ~1e-16, which would hide
// the truncation error of heralded states with small success probabilities.
template <class State>
State make_state(const gaussian::StandardForm& form, int cutoff) {
  State state = convert(form, cutoff, static_cast<State*>(nullptr));
  const double deficit = fock::gaussian_trace_deficit(form, cutoff);
  state.add_truncation_loss(deficit - state.truncation_loss());
  return state;
}

// The largest cutoff whose state fits in the memory allowed (-1 if none).
int largest_fitting_cutoff(fock::Engine engine, double max_bytes) {
  int n = -1;
  while (n < 100000 && fock::memory_bytes_for(engine, n + 1) <= max_bytes) ++n;
  return n;
}

template <class State>
class Evaluator {
public:
  Evaluator(const PointSpec& spec, const gaussian::StandardForm& form, std::size_t first)
      : spec_(spec), form_(form), first_(first) {}

  struct Run {
    State state;
    double probability;
    double ledger;
    double cut_fraction;
    // The error scale of the figures: sqrt(ledger / P) (see PointResult::truncation_error).
    double error() const {
      return probability > 0.0 ? std::sqrt(std::max(0.0, ledger) / probability)
                               : std::numeric_limits<double>::infinity();
    }
  };

  Run run(int cutoff, Weighting weighting) {
    State state = make_state<State>(form_, cutoff);
    double cut = 0.0;
    for (std::size_t i = first_; i < spec_.steps.size(); ++i) {
      detail::poll(spec_.numerics);
      StepContext context = detail::step_context(spec_, spec_.steps[i], weighting, &work_);
      context.amplifier_cut_fraction = cut;
      steps::apply(state, spec_.steps[i], context);
      cut = context.amplifier_cut_fraction;
    }
    const double p = state.trace(), ledger = state.truncation_loss();
    return Run{std::move(state), p, ledger, cut};
  }

  PointResult evaluate() {
    PointResult result;
    result.method = Method::fock;
    const Numerics& numerics = spec_.numerics;
    const fock::Engine engine = numerics.engine;
    // Every cutoff search is bounded by max_cutoff as well as by the memory allowed, before any
    // large loop starts (the Gaussian trace deficit costs O(N^2 log N) per trial cutoff).
    const double search_bytes = std::min(numerics.max_memory_bytes,
                                         fock::memory_bytes_for(engine, std::max(1, numerics.max_cutoff) + 1));
    const double max_bytes = numerics.cutoff > 0 ? numerics.max_memory_bytes : search_bytes;
    const double tol = numerics.tolerance;
    std::optional<Run> last;
    int last_cutoff = -1;
    int needed = 0;

    if (numerics.cutoff > 0) {
      const double bytes = fock::memory_bytes_for(engine, numerics.cutoff);
      if (bytes > max_bytes)
        throw InputError("", 0, "numerics.cutoff", std::to_string(numerics.cutoff),
                         "a cutoff whose state fits in the memory allowed (" + mebibytes(max_bytes) +
                             "; this one needs " + mebibytes(bytes) + ")");
      last = run(numerics.cutoff, Weighting::full);
      last_cutoff = numerics.cutoff;
      needed = numerics.cutoff;
      if (!(last->error() <= tol)) {
        // Estimate the cutoff the tolerance needs from a second, cheaper run.
        const int smaller = std::max(1, (3 * numerics.cutoff) / 4);
        if (smaller < numerics.cutoff) {
          const Run probe = run(smaller, Weighting::full);
          needed = extrapolate(smaller, probe.error(), numerics.cutoff, last->error(), tol);
        } else {
          needed = numerics.cutoff + 1;
        }
      }
    } else {
      int cutoff = 1;
      bool fits = true;
      try {
        cutoff = std::max(1, fock::auto_cutoff_gaussian(form_, std::max(tol * tol, tiny), engine, max_bytes));
      } catch (const fock::CutoffError& e) {
        cutoff = e.needed_cutoff();
        fits = false;
      }
      const int limit = std::min(numerics.max_cutoff, largest_fitting_cutoff(engine, max_bytes));
      // A heralded state has ledger / P >> the conversion deficit when P is small. A cheap pilot
      // run at half the cutoff (1/11 of the cost) estimates P; the conversion deficit that meets
      // the tolerance on it, tol^2 P / 2, then gives the cutoff directly instead of raising it
      // round by round. Steps that push photons above the cutoff are caught by the loop below.
      if (fits && first_ < spec_.steps.size() && cutoff <= limit) {
        const int pilot = std::max(4, cutoff / 2);
        const Run r = run(pilot, Weighting::full);
        if (r.probability >= smallest_probability && r.probability < 1.0 - 1e-12 && std::isfinite(r.probability)) {
          try {
            cutoff = std::max(cutoff, fock::auto_cutoff_gaussian(form_, std::max(0.5 * tol * tol * r.probability, tiny),
                                                                 engine, max_bytes));
          } catch (const fock::CutoffError& e) {
            cutoff = e.needed_cutoff();
            fits = false;
          }
        }
      }
      int prev_cutoff = -1;
      double prev_error = 0.0;
      for (int round = 0; round < max_cutoff_rounds; ++round) {
        detail::poll(numerics);
        if (!fits || cutoff > limit) {
          // Refuse to go beyond the memory bound or the largest cutoff allowed; keep the
          // figures of the last cutoff tried (or compute them at the limit if none was) and say
          // what the tolerance needs.
          needed = cutoff;
          if (!last && limit >= 0) {
            last = run(limit, Weighting::full);
            last_cutoff = limit;
          }
          break;
        }
        last = run(cutoff, Weighting::full);
        last_cutoff = cutoff;
        needed = cutoff;
        const double err = last->error();
        if (err <= tol) break;
        int next = static_cast<int>(std::ceil(1.25 * cutoff + 2.0));
        if (prev_cutoff >= 0) {
          // No herald at two cutoffs in a row: the protocol cannot fire (e.g. ideal counters
          // behind a tap of transmissivity 1); more photons will not change that.
          if (!(last->probability >= smallest_probability) && !(prev_error < INFINITY)) break;
          // The error no longer falls with the cutoff: round-off, not truncation, dominates.
          if (std::isfinite(err) && err > 0.9 * prev_error) {
            needed = extrapolate(prev_cutoff, prev_error, cutoff, err, tol);
            break;
          }
          next = std::max(cutoff + 1, std::min(2 * cutoff + 4, extrapolate(prev_cutoff, prev_error, cutoff, err, tol) + 1));
        }
        prev_cutoff = cutoff;
        prev_error = err;
        cutoff = next;
        needed = next;
      }
    }

    if (!last) {  // not even the smallest state fits
      result.status = Status::truncation_budget_missed;
      result.cutoff_needed = needed;
      return result;
    }
    fill(result, *last, last_cutoff);
    result.cutoff_needed = std::max(needed, last_cutoff);
    if (result.status == Status::ok && !(last->error() <= tol)) result.status = Status::truncation_budget_missed;
    return result;
  }

private:
  // Smallest N with error <= tol on the geometric model error(N) = e1 q^{N - n1} through two
  // runs; without a usable decay, one round more.
  static int extrapolate(int n0, double e0, int n1, double e1, double tol) {
    if (!(std::isfinite(e0) && std::isfinite(e1)) || e1 <= 0.0 || e0 <= e1 || n1 <= n0)
      return static_cast<int>(std::ceil(1.25 * n1 + 2.0));
    const double rate = std::log(e1 / e0) / (n1 - n0);  // < 0
    const double steps = std::ceil(std::log(tol / e1) / rate);
    return n1 + static_cast<int>(std::clamp(steps, 1.0, 1e6));
  }

  void fill(PointResult& r, const Run& run, int cutoff) {
    r.cutoff = cutoff;
    r.success_probability = run.probability;
    r.amplifier_cut_fraction = run.cut_fraction;
    const double p = run.probability;
    if (!std::isfinite(p) || p < -probability_slack || p > 1.0 + probability_slack) {
      // A trace-non-increasing map cannot give P outside [0, 1]: a numerical breakdown.
      r.status = Status::invalid_result;
      r.success_probability = 0.0;
      return;
    }
    if (!(p >= smallest_probability) || !(p > run.ledger)) {
      // A herald too rare for double precision, or a state so far beyond the cutoff that the
      // lost weight exceeds what is kept (a link whose bath swamps the mode): no figures.
      r.status = p >= smallest_probability ? Status::truncation_budget_missed : Status::herald_below_roundoff;
      r.truncation_error = p > 0.0 ? run.error() : 0.0;
      if (!std::isfinite(r.truncation_error)) r.truncation_error = 0.0;
      r.success_probability = std::max(0.0, p);  // |p| <= probability_slack here: round-off
      return;
    }
    r.truncation_error = run.error();
    const auto e = measures::entanglement(run.state, measures_work_);
    r.negativity = e.negativity;
    r.log_negativity = e.log_negativity;
    r.fidelity = measures::fidelity(run.state, measures_work_);
    if (uses_counters(spec_.steps, first_) && any_dark_counts(spec_, first_)) {
      // Only the genuine success probability is needed, and the ledger bounds its error exactly:
      // half the cutoff (1/11 of the cost) usually already has ledger / P_genuine below the
      // tolerance; otherwise the full cutoff is used.
      const Run half = this->run(std::max(4, cutoff / 2), Weighting::genuine);
      const double genuine = (half.probability > 0.0 && half.ledger <= spec_.numerics.tolerance * half.probability)
                                 ? half.probability
                                 : this->run(cutoff, Weighting::genuine).probability;
      r.false_herald_fraction = 1.0 - genuine / p;  // range-checked below, not clipped
    }
    r.status = Status::ok;
    r.method = Method::fock;
    for (double x : {r.success_probability, r.negativity, r.log_negativity, r.fidelity, r.false_herald_fraction,
                     r.truncation_error, r.amplifier_cut_fraction})
      if (!std::isfinite(x)) r.status = Status::invalid_result;
    // Ranges (PointResult's contract): P, F and the false-herald fraction in [0, 1]; N, E_N >= 0.
    if (!within(r.success_probability, 0.0, 1.0, probability_slack) ||
        !within(r.negativity, 0.0, INFINITY, measure_slack) || !within(r.log_negativity, 0.0, INFINITY, measure_slack) ||
        !within(r.fidelity, 0.0, 1.0, measure_slack) || !within(r.false_herald_fraction, 0.0, 1.0, measure_slack))
      r.status = Status::invalid_result;
    if (r.status == Status::invalid_result) {
      r.negativity = r.log_negativity = r.fidelity = r.false_herald_fraction = 0.0;
      if (!std::isfinite(r.success_probability)) r.success_probability = 0.0;
      if (!std::isfinite(r.truncation_error)) r.truncation_error = 0.0;
    }
  }

 private:
  const PointSpec& spec_;
  gaussian::StandardForm form_;
  std::size_t first_;
  fock::Workspace work_;
  measures::Workspace measures_work_;
};

// The heralding rate of a point with figures (flagged ones included): trial rate x P.
void rate(const PointSpec& spec, PointResult& r) {
  if (!(has_figures(r.status) || r.status == Status::truncation_budget_missed)) return;
  const double trials = steps::trial_rate_hz(spec.source.bandwidth_hz, steps::counters_used(spec.steps, spec.counters));
  r.heralding_rate_hz = trials * r.success_probability;
}

template <class State>
PointResult fock_path(const PointSpec& spec, const gaussian::StandardForm& form, std::size_t first) {
  Evaluator<State> e(spec, form, first);
  return e.evaluate();
}

PointResult fock_path(const PointSpec& spec, const gaussian::StandardForm& form, std::size_t first) {
  return spec.numerics.engine == fock::Engine::sector ? fock_path<fock::SectorState>(spec, form, first)
                                                      : fock_path<fock::DenseState>(spec, form, first);
}

// A separable result: N = E_N = 0 exactly (local operations and postselection cannot create
// entanglement), P and the false-herald fraction exact, F exact or its bound 1/2.
PointResult separable_result(double p, double genuine, double fidelity, bool fidelity_is_bound, Method method) {
  PointResult r;
  r.method = method;
  r.status = Status::separable_input;
  r.success_probability = p;
  r.fidelity = fidelity;
  r.fidelity_bound = fidelity_is_bound ? 1 : 0;
  if (!(p >= smallest_probability)) {
    r.status = Status::herald_below_roundoff;
    r.success_probability = std::max(0.0, std::isfinite(p) ? p : 0.0);
    r.fidelity = 0.0;
    r.fidelity_bound = 0;
    return r;
  }
  r.false_herald_fraction = 1.0 - genuine / p;
  if (!within(r.success_probability, 0.0, 1.0, probability_slack) || !within(r.fidelity, 0.0, 0.5, measure_slack) ||
      !within(r.false_herald_fraction, 0.0, 1.0, measure_slack)) {
    r.status = Status::invalid_result;
    r.fidelity = r.false_herald_fraction = 0.0;
    r.fidelity_bound = 0;
    if (!std::isfinite(r.success_probability)) r.success_probability = 0.0;
  }
  return r;
}

}  // namespace

PointResult evaluate(const PointSpec& spec) {
  check_point(spec);
  // The kernels (conversion, Kraus sums, measures) poll the flag between their blocks.
  const CancelScope cancel_scope(spec.numerics.cancel ? spec.numerics.cancel : heraldry::cancel_detail::cancel_flag);
  detail::poll(spec.numerics);
  // Gaussian prefix: leading link and loss steps act on the covariance matrix (exact), so the
  // state enters Fock space once, after the last Gaussian step (docs/physics.md §2.3).
  std::size_t first = 0;
  const gaussian::StandardForm form = detail::gaussian_prefix(spec, first);
  // The cheapest exact path (docs/physics.md §14).
  PointResult r;
  if (first == spec.steps.size()) {  // Gaussian steps only
    r = detail::covariance_figures(form);
    rate(spec, r);
    return r;
  }
  const bool separable_in = detail::separable(form);
  if (separable_in || detail::breaks_entanglement(spec, first)) {
    if (const auto sum = detail::gaussian_sum(spec, form, first)) {
      r = separable_result(sum->probability, sum->genuine_probability, sum->fidelity, false, Method::gaussian_sum);
    } else if (const auto num = separable_in ? detail::photon_number(spec, form, first) : std::nullopt) {
      r = separable_result(num->probability, num->genuine_probability, 0.5, true, Method::photon_number);
      if (r.status == Status::separable_input) {
        r.truncation_error = num->tail / r.success_probability;
        r.amplifier_cut_fraction = num->amplifier_cut_fraction;
        // Where the state is small enough for the Fock engine within max_cutoff (the marginal
        // tails q^(N+1) = tol^2, q the larger thermal ratio: a lower bound on the cutoff), its
        // fidelity replaces the bound when it meets the tolerance.
        const double q = std::max((form.a - 1.0) / (form.a + 1.0), (form.b - 1.0) / (form.b + 1.0));
        const double tol = spec.numerics.tolerance;
        if (q <= 0.0 || 2.0 * std::log(tol) / std::log(q) <= spec.numerics.max_cutoff) {
          const PointResult f = fock_path(spec, form, first);
          if (f.status == Status::ok && f.fidelity <= 0.5 + measure_slack) {
            r.fidelity = std::min(f.fidelity, 0.5);
            r.fidelity_bound = 0;
          }
        }
      }
    } else {
      // No closed form for these steps: the Fock engine, whose entanglement figures are 0 by
      // the theorem whatever the truncation makes of them.
      r = fock_path(spec, form, first);
      r.negativity = r.log_negativity = 0.0;
      if (r.status == Status::ok) r.status = Status::separable_input;
    }
  } else {
    r = fock_path(spec, form, first);
  }
  rate(spec, r);
  return r;
}

}  // namespace heraldry::point
