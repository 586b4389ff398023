// Heralded distillation steps with real photon counters, and the step registry: each kind of
// step (link, tap, add, amplify, scissors, loss) is one file in src/steps that defines its
// parameters (the schema the scenario reader follows), whether it uses a counter, and what it
// does (a channel on the covariance matrix, or a Kraus set in Fock space). Conventions: shot-noise
// units, lambda = tanh r >= 0; Kraus operators, taps, counters, amplifiers, scissors and addition
// as in docs/physics.md §3.3, §4 and §5.
#pragma once

#include <limits>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "heraldry/common.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/link.hpp"

namespace heraldry::steps {

// ------------------------------------------------------------------------------ counters

enum class CounterKind { threshold, resolving };

/// A photon counter behind a tap (or on an idler, or in a scissors). Efficiency eta lumps every
/// loss between the beam splitter and the counts into one number (common practice; Kitagawa,
/// Takeoka, Sasaki & Chefles, PRA 73, 042310 (2006)).
struct CounterModel {
  CounterKind kind = CounterKind::threshold;
  double efficiency = 1.0;
  /// threshold: dark-click probability p per gate; resolving: mean dark counts nu per gate
  /// (Poissonian).
  double dark = 0.0;
  double gate_s = 1.0e-6;   // gate (detection window) length
  double reset_s = 0.0;     // dead time after a gate
};

/// Which part of a counter's response a herald weight keeps.
/// full: the probability of the reading. genuine: the part in which the counter received at
/// least as many photons as the reading claims (threshold click: k >= 1 photons reached the
/// counter; resolving j counts: k >= j), i.e. the heralded state underwent the photon loss (or
/// gain) the reading announces, whatever misses and dark counts did to the count itself. A
/// silent counter (no click, zero counts) keeps its full weight. Running a protocol with genuine
/// weights gives the false-herald fraction 1 - P_genuine / P (docs/physics.md §4.3).
enum class Weighting { full, genuine };

/// Per-gate dark probability from a dark-count rate: p = 1 - exp(-R t) (Poisson arrivals).
double dark_probability(double rate_hz, double gate_s);

/// The counter's `dark` value from a dark-count rate R over a gate t (Poissonian arrivals): a
/// threshold counter clicks on at least one, p = 1 - exp(-R t); a resolving counter's mean is
/// nu = R t. The one conversion of a rate, used by the scenario reader and for swept rates.
double dark_per_gate(CounterKind kind, double rate_hz, double gate_s);

/// P(reading | k photons reach the counter).
/// threshold: reading 1 = click, 1 - (1-p)(1-eta)^k; reading 0 = no click, (1-p)(1-eta)^k.
/// resolving: reading j = exactly j counts,
///   sum_{i=0}^{min(j,k)} C(k,i) eta^i (1-eta)^{k-i} e^{-nu} nu^{j-i} / (j-i)!   (docs/physics.md §4.2).
/// Throws InputError for a threshold reading other than 0 or 1, or a negative reading.
double reading_probability(const CounterModel& counter, int reading, int photons,
                           Weighting weighting = Weighting::full);

/// reading_probability for k = 0 .. max_photons.
std::vector<double> reading_weights(const CounterModel& counter, int reading, int max_photons,
                                    Weighting weighting = Weighting::full);

/// Checks efficiency in [0, 1], dark in [0, 1] (threshold) or >= 0 (resolving), gate > 0,
/// reset >= 0. `key` names the counter in the message.
void validate(const CounterModel& counter, const std::string& key);

/// Trials per second: min(bandwidth, min over the counters of 1 / (gate + reset)) (common
/// practice: a counter cannot be gated faster than its gate plus dead time; the source cannot
/// deliver more modes than its bandwidth). No counters: the bandwidth.
double trial_rate_hz(double bandwidth_hz, const std::vector<CounterModel>& counters_used);

// ---- Kraus sets of the heralded steps on a per-mode cutoff N (photon numbers 0..N). Each is
// the heralded, unnormalised map rho -> sum_k K_k rho K_k^T; photons pushed above N are left to
// the engine, which books them in its truncation ledger.

/// Tap: K_k = sqrt(w(k)) A_k, A_k = the pure-loss Kraus operators of transmissivity T
/// (<n-k|A_k|n> = sqrt(C(n,k) T^{n-k} (1-T)^k), docs/physics.md §4.1), w(k) = P(reading | k).
fock::Operation tap_operation(double transmissivity, const CounterModel& counter, int reading,
                              int cutoff, Weighting weighting = Weighting::full);

/// Heralded photon addition (docs/physics.md §5.3): a two-mode squeezer of parameter s with a
/// vacuum idler acts on the mode as the quantum-limited amplifier of gain G = cosh^2 s,
/// B_k = sqrt(C(n+k,k)) G^{-(n+1)/2} (1-1/G)^{k/2} |n+k><n| with k photons in the idler;
/// K_k = sqrt(w(k)) B_k. The k >= N+1 terms, which leave the truncated space entirely, are
/// lumped into one operator of shift N+1 (it only feeds the ledger). 0 <= s <= 3.
fock::Operation add_operation(double squeezing, const CounterModel& counter, int reading,
                              int cutoff, Weighting weighting = Weighting::full);

/// Noiseless amplifier g^n (Ralph & Lund, AIP Conf. Proc. 1110, 155 (2009)).
/// g > 1, N = max_photons > 0: K = g^{n-N} Pi_N, the largest multiple of g^n with K^T K <= I on
/// a realisation that keeps n <= N (docs/physics.md §5.1). max_photons = 0 (ideal): N = the
/// cutoff, i.e. the bound of a realisation keeping every photon number the engine holds (it
/// vanishes as the cutoff grows: an ideal amplifier has no finite success probability).
/// g <= 1: K = g^n (already a contraction).
fock::Operation amplify_operation(double gain, int max_photons, int cutoff);

/// Quantum scissors (Pegg, Phillips & Barnett, PRL 81, 1604 (1998)) used as an amplifier
/// (Ralph & Lund 2009): a single photon, present with probability `source_efficiency`, split
/// with reflectivity kappa = g^2/(1+g^2) into the output mode; the other arm meets the input on
/// a 50:50 beam splitter watched by two counters of the same model; herald: exactly one fires
/// (threshold: one click, one silent; resolving: one count and zero counts).
/// With ideal counters it applies T_± = sqrt((1-kappa)/2)(|0><0| ± g |1><1|) (docs/physics.md
/// §5.2). The second outcome gets the pi-phase correction |1> -> -|1> before the outcomes are
/// merged; phase_correction = false omits it (for tests: that mixture carries no entanglement).
fock::Operation scissors_operation(double gain, double source_efficiency,
                                   const CounterModel& counter, int cutoff,
                                   Weighting weighting = Weighting::full,
                                   bool phase_correction = true);

// ------------------------------------------------------------------------------ the registry

/// No bound on that side of a Range.
inline constexpr double unbounded = std::numeric_limits<double>::infinity();

/// An interval of allowed values (every bound also requires a finite number).
struct Range {
  double lo = -unbounded;
  double hi = unbounded;
  bool lo_open = false;
  bool hi_open = false;
  bool contains(double x) const;
};

/// One parameter of a step kind: its key in a scenario's step table, its units (SI), meaning,
/// range and default. Numbers may be swept (a list or range adds an axis) and tuned; integers
/// may not. `alternative_key` is a second spelling in other units (a loss in dB for a
/// transmissivity), converted to this parameter by `alternative_to_si`; exactly one of the two
/// may be written.
struct ParamSchema {
  enum class Type { number, integer };
  std::string_view key;
  std::string_view units;
  std::string_view description;
  Type type = Type::number;
  Range range;
  std::optional<double> fallback;         // absent: required
  std::string_view alternative_key = {};
  Range alternative_range = {};
  double (*alternative_to_si)(double) = nullptr;
};

struct StepType;

/// One resolved step: its kind, the mode it acts on, its counter (an index into the point's
/// counters, for kinds that use one) and one value per parameter of its schema, in schema order
/// and SI units (integers stored exactly as doubles). Built by the scenario layer or by make().
struct StepSpec {
  const StepType* type = nullptr;
  Mode mode = Mode::B;
  int counter = -1;
  std::vector<double> values;
  /// The value of parameter `key` (std::invalid_argument if the kind has no such parameter).
  double value(std::string_view key) const;
  /// Sets parameter `key` (std::invalid_argument if the kind has no such parameter).
  void set(std::string_view key, double v);
};

/// What a step may read besides its own spec, and what it reports back.
struct StepContext {
  const CounterModel* counter = nullptr;  // the step's counter (kinds that use one)
  double frequency_hz = 0.0;              // carrier of the mode the step acts on
  link::Channel link_a, link_b;           // the link's channels at this point (the link step)
  Weighting weighting = Weighting::full;
  fock::Workspace* work = nullptr;
  double amplifier_cut_fraction = 0.0;    // largest over the amplify steps run so far
};

/// The channels a Gaussian step applies to each mode (absent: identity on that mode).
struct Channels {
  std::optional<link::Channel> a, b;
};

/// A heralded step written as a Gaussian unitary on (the mode, a vacuum ancilla) whose ancilla
/// a threshold counter then reads: the step's map is the ancilla traced with the effect of that
/// reading, a signed sum of Gaussian operators (docs/physics.md §14.2).
struct GaussianDilation {
  Eigen::Matrix4d symplectic;  // on (x, p of the mode; x, p of the ancilla), vacuum variance 1
  int reading = 1;             // 1: heralded on a click, 0: on no click
};

/// A kind of step. Gaussian kinds (link, loss) act as thermal-loss channels, on the covariance
/// matrix while the state is Gaussian and by their Kraus sums once it is in Fock space (the
/// evaluator does both from `channels`); heralded kinds give their heralding map for each engine.
struct StepType {
  enum class Role { link, channel, herald };
  std::string_view name;                       // the key of its table in a protocol ("link": the string)
  std::string_view summary;                    // one line for messages and docs
  Role role = Role::herald;
  std::span<const ParamSchema> params;
  bool uses_counter = false;
  /// Cross-checks with the counter that the schema cannot express (e.g. a reading a threshold
  /// counter cannot give); throws InputError naming the parameter key. May be null.
  void (*check)(const StepSpec&, const CounterModel& counter, std::string_view counter_name) = nullptr;
  /// Gaussian kinds: the channel on each mode.
  Channels (*channels)(const StepSpec&, const StepContext&) = nullptr;
  /// Heralded kinds: apply the step to a Fock state (both engines).
  void (*apply_sector)(fock::SectorState&, const StepSpec&, StepContext&) = nullptr;
  void (*apply_dense)(fock::DenseState&, const StepSpec&, StepContext&) = nullptr;
  /// Heralded kinds (all are phase-covariant): the diagonal of the step's effect
  /// sum_k K_k^dagger K_k on photon numbers n = 0..max_photons, i.e. the probability that the
  /// step heralds on |n>, for the context's counter and weighting, with no cutoff (exact to
  /// ~1e-18 absolute). Null: the kind has no such form.
  std::vector<double> (*effect)(const StepSpec&, const StepContext&, int max_photons) = nullptr;
  /// Heralded kinds with a Gaussian dilation (the counter must be a threshold counter for the
  /// map to be a sum of Gaussian terms): the dilation, or nullopt for this spec and counter.
  std::optional<GaussianDilation> (*dilation)(const StepSpec&, const CounterModel&) = nullptr;

  /// Index of parameter `key` in `params` (-1 if none).
  int param_index(std::string_view key) const;
};

/// Every kind of step, in the order of src/steps/registry.cpp.
std::span<const StepType* const> registry();
/// The kind named `name`, or nullptr.
const StepType* find_step_type(std::string_view name);
/// The link step (exactly one per protocol).
const StepType& link_type();

/// A step of kind `name` on `mode` with the given parameter values (the others at their
/// defaults) and counter index: for tests and programs that build points by hand.
/// std::invalid_argument for an unknown kind or key, or a required parameter left out.
StepSpec make(std::string_view name, Mode mode = Mode::B,
              std::initializer_list<std::pair<std::string_view, double>> values = {}, int counter = -1);

/// Applies one step to a Fock state: a Gaussian kind through the Kraus sums of its channels, a
/// heralded kind through its own operation (with the context's counter, weighting, workspace).
void apply(fock::SectorState& state, const StepSpec& step, StepContext& context);
void apply(fock::DenseState& state, const StepSpec& step, StepContext& context);

/// The counters the steps of a protocol use (for trial_rate_hz), each counted once.
std::vector<CounterModel> counters_used(const std::vector<StepSpec>& steps,
                                        const std::vector<CounterModel>& counters);

}  // namespace heraldry::steps
