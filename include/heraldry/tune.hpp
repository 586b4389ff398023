// Tuning: the free parameters a scenario marks with `{ tune = [lo, hi] }` (step parameters and
// [source] squeezing_db) optimised for one protocol at one distance, derivative-free, every
// evaluation through sweep::resolve + point::evaluate (one point each).
#pragma once

#include <cstddef>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "heraldry/common.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"

namespace heraldry::tune {

/// What is maximised. rate: heralding rate x E_N (ebit/s), an upper bound on the rate of
/// distillable entanglement (E_N bounds the distillable entanglement: Vidal & Werner, PRA 65,
/// 032314 (2002)).
enum class Objective { fidelity, log_negativity, rate };

/// "fidelity", "log-negativity", "rate".
const char* to_string(Objective objective);
/// Units of the objective: "1", "ebit", "ebit/s".
const char* units(Objective objective);
/// Parses an objective name; anything else is an InputError on the key "--objective".
Objective objective_from_string(std::string_view name);

/// One tunable parameter of a protocol.
struct Knob {
  std::string name;         // "source.squeezing_db" or "tap_b.transmissivity" (step label + key)
  std::string units;        // "dB", "1", "K"
  std::string description;  // "tap on mode b: transmissivity"
  double lo = 0.0;          // the range from the scenario (SI; dB for the squeezing, as the
  double hi = 0.0;          // user writes and reads it: applied as r = dB ln(10) / 20)
  int step = -1;            // index into Protocol::steps; -1 for the source squeezing
  int param = -1;           // index of the step parameter in its kind's schema
};

/// The tunable parameters of protocol `protocol` of the scenario: the source squeezing first
/// (if tunable), then step parameters in step order.
std::vector<Knob> knobs(const scenario::Scenario& sc, std::size_t protocol);

struct Options {
  std::string protocol;                               // the protocol's name
  Objective objective = Objective::fidelity;
  std::optional<double> at_m;                         // default: [link] target_m
  std::optional<double> min_rate_hz;                  // feasible: heralding rate >= this
  std::optional<double> max_false_herald_fraction;    // feasible: false heralds <= this
  int threads = 1;                                    // threads for the independent evaluations
  bool exact_search = false;                          // every evaluation at the scenario's tolerance (benchmarks)
  /// Called after every evaluation (from the calling thread or a worker, one at a time): the
  /// evaluations done, the expected total (an estimate) and the seconds so far.
  std::function<void(std::size_t done, std::size_t expected, double seconds)> progress;
};

/// The truncation tolerance of the search: the scenario's, but not below 1e-6. The figures of
/// a search point then carry up to ~1e-6 of truncation error, far below the objective's changes
/// that steer the search, at a fraction of the cost (the cutoff grows like log(1/tolerance) and
/// the cost like its fourth power). The optimum and the figures reported are evaluated again at
/// the scenario's own tolerance.
double search_tolerance(double scenario_tolerance);

/// The figures of one evaluated setting: the point's result, whether it is feasible, and the
/// objective there.
struct Figures : point::PointResult {
  /// status ok and every constraint of Options met.
  bool feasible = false;
  /// The objective's value; -infinity when not feasible (such a point is never chosen).
  double objective = 0.0;
};

/// The objective's change at -5 % and +5 % of one parameter (clamped to its range), the others
/// at the optimum (evaluated at the search tolerance).
struct Sensitivity {
  double minus_value = 0.0, minus_objective = 0.0;   // objective -inf: infeasible there
  double plus_value = 0.0, plus_objective = 0.0;
};

struct Result {
  std::string protocol;
  Objective objective = Objective::fidelity;
  double distance_m = 0.0;
  std::vector<Knob> knobs;
  bool feasible = false;                 // false: no evaluated point met the constraints
  std::vector<double> best;              // the optimum, one value per knob
  Figures at_best;
  double bare_log_negativity = 0.0;      // the bare link (Gaussian) at the same distance, with
  double bare_fidelity = 0.0;            // the source squeezing of the optimum
  std::vector<Sensitivity> sensitivity;  // one per knob (empty when not feasible)
  std::size_t evaluations = 0;
};

/// Index of the protocol named `name`; an InputError on "--protocol" naming the protocols
/// otherwise.
std::size_t find_protocol(const scenario::Scenario& sc, std::string_view name);

/// Checks the options (constraints >= 0, false-herald fraction in [0, 1], distance >= 0) and
/// that the protocol exists and has a tunable parameter; returns the protocol's index. The
/// errors are InputErrors naming the option (or, for nothing tunable, the keys that can be
/// tuned and how).
std::size_t check(const scenario::Scenario& sc, const Options& options);

/// Evaluates protocol `protocol` at distance d with the knobs set to `values` (one per knob;
/// swept parameters that are not tuned take their first value), at the scenario's tolerance.
/// Pure apart from the work.
Figures evaluate_at(const scenario::Scenario& sc, const Options& options, std::size_t protocol,
                    double distance_m, std::span<const Knob> knobs, std::span<const double> values);

/// The optimiser. Every search evaluation uses search_tolerance(); the grid's points are
/// evaluated in parallel on options.threads threads. One knob: a 9-point scan of the range,
/// then Brent's method
/// (boost::math::tools::brent_find_minima) in the bracket around the best scan point. Two or
/// three knobs: the best point of a 5 x 5 (or 3 x 3 x 3) grid, then cyclic coordinate search
/// with Brent line searches (derivative-free, in the manner of Powell's method without
/// direction updates) until a sweep changes the objective by less than 1e-6 relative. More than
/// three knobs: an InputError. Throws what check() throws.
Result run(const scenario::Scenario& sc, const Options& options);

}  // namespace heraldry::tune
