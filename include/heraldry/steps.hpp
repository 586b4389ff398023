// Heralded distillation steps with real photon counters, and the point evaluator that every
// command calls: source -> Gaussian prefix on the covariance matrix -> one conversion to Fock
// space -> the remaining steps as Kraus sums -> success probability, entanglement, fidelity.
// Conventions: PHYSICS.md §0 (shot-noise units, lambda = tanh r >= 0), §3.3 (Kraus operators),
// §4 (taps and counters), §5 (amplifiers, scissors, addition).
#pragma once

#include <string>
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
/// full: the probability of the reading. genuine: the part in which every count comes from a
/// detected photon (threshold click: at least one photon detected; resolving j counts: j
/// detected photons and no dark count). A silent counter (no click, zero counts) keeps its full
/// weight. Running a protocol with genuine weights gives the false-herald fraction
/// 1 - P_genuine / P.
enum class Weighting { full, genuine };

/// Per-gate dark probability from a dark-count rate: p = 1 - exp(-R t) (Poisson arrivals).
double dark_probability(double rate_hz, double gate_s);

/// P(reading | k photons reach the counter).
/// threshold: reading 1 = click, 1 - (1-p)(1-eta)^k; reading 0 = no click, (1-p)(1-eta)^k.
/// resolving: reading j = exactly j counts,
///   sum_{i=0}^{min(j,k)} C(k,i) eta^i (1-eta)^{k-i} e^{-nu} nu^{j-i} / (j-i)!   (PHYSICS.md §4.2).
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

// ------------------------------------------------------------------------------ steps

enum class StepKind { link, tap, add, amplify, scissors, loss };
const char* to_string(StepKind kind);

/// One resolved step (no file format, no ranges: one value per parameter, SI units).
/// Fields a kind does not use are ignored.
struct StepSpec {
  StepKind kind = StepKind::link;
  Mode mode = Mode::B;                   // the mode the step acts on (link: both)
  double transmissivity = 1.0;           // tap: T of the tap beam splitter; loss: tau
  double gain = 1.0;                     // amplify: g of g^n; scissors: g = sqrt(kappa/(1-kappa))
  double squeezing = 0.0;                // add: two-mode squeezing parameter s of the adder
  double photon_source_efficiency = 1.0; // scissors: probability that the ancilla photon is there
  double bath_photons = 0.0;             // loss: thermal occupation of the environment
  int counter = -1;                      // tap, add, scissors: index into PointSpec::counters
  int counts = 1;                        // tap, add: herald reading (threshold: 1 click, 0 none)
  int max_photons = 0;                   // amplify: N of the physical realisation (0: ideal)
};

// ---- Kraus sets of the heralded steps on a per-mode cutoff N (photon numbers 0..N). Each is
// the heralded, unnormalised map rho -> sum_k K_k rho K_k^T; photons pushed above N are left to
// the engine, which books them in its truncation ledger.

/// Tap: K_k = sqrt(w(k)) A_k, A_k = the pure-loss Kraus operators of transmissivity T
/// (<n-k|A_k|n> = sqrt(C(n,k) T^{n-k} (1-T)^k), PHYSICS.md §4.1), w(k) = P(reading | k).
fock::Operation tap_operation(double transmissivity, const CounterModel& counter, int reading,
                              int cutoff, Weighting weighting = Weighting::full);

/// Heralded photon addition (PHYSICS.md §5.3): a two-mode squeezer of parameter s with a vacuum
/// idler acts on the mode as the quantum-limited amplifier of gain G = cosh^2 s,
/// B_k = sqrt(C(n+k,k)) G^{-(n+1)/2} (1-1/G)^{k/2} |n+k><n| with k photons in the idler;
/// K_k = sqrt(w(k)) B_k. The k >= N+1 terms, which leave the truncated space entirely, are
/// lumped into one operator of shift N+1 (it only feeds the ledger). 0 <= s <= 3.
fock::Operation add_operation(double squeezing, const CounterModel& counter, int reading,
                              int cutoff, Weighting weighting = Weighting::full);

/// Noiseless amplifier g^n (Ralph & Lund, AIP Conf. Proc. 1110, 155 (2009)).
/// g > 1, N = max_photons > 0: K = g^{n-N} Pi_N, the largest multiple of g^n with K^T K <= I on
/// a realisation that keeps n <= N (PHYSICS.md §5.1). max_photons = 0 (ideal): N = the cutoff,
/// i.e. the bound of a realisation keeping every photon number the engine holds (it vanishes as
/// the cutoff grows: an ideal amplifier has no finite success probability).
/// g <= 1: K = g^n (already a contraction).
fock::Operation amplify_operation(double gain, int max_photons, int cutoff);

/// Quantum scissors (Pegg, Phillips & Barnett, PRL 81, 1604 (1998)) used as an amplifier
/// (Ralph & Lund 2009): a single photon, present with probability `source_efficiency`, split
/// with reflectivity kappa = g^2/(1+g^2) into the output mode; the other arm meets the input on
/// a 50:50 beam splitter watched by two counters of the same model; herald: exactly one fires
/// (threshold: one click, one silent; resolving: one count and zero counts).
/// With ideal counters it applies T_± = sqrt((1-kappa)/2)(|0><0| ± g |1><1|) (PHYSICS.md §5.2).
/// The second outcome gets the pi-phase correction |1> -> -|1> before the outcomes are merged;
/// phase_correction = false omits it (for tests: that mixture carries no entanglement).
fock::Operation scissors_operation(double gain, double source_efficiency,
                                   const CounterModel& counter, int cutoff,
                                   Weighting weighting = Weighting::full,
                                   bool phase_correction = true);

// ------------------------------------------------------------------------------ a point

/// Everything one evaluation needs, resolved (SI units, no ranges).
struct PointSpec {
  double squeezing_r = 0.0;              // two-mode squeezing parameter at the source
  double thermal_photons = 0.0;          // per mode at the source
  link::Channel channel_a;               // applied to mode A by the `link` step
  link::Channel channel_b;               // applied to mode B by the `link` step
  std::vector<StepSpec> steps;
  std::vector<CounterModel> counters;
  fock::Engine engine = fock::Engine::sector;
  int cutoff = 0;                        // per-mode photon-number cutoff; 0 = auto
  double tolerance = 1e-10;              // truncation budget (relative, on the heralded state)
  double max_memory_bytes = 4.0 * 1024 * 1024 * 1024;  // per state, for the auto cutoff
  int max_cutoff = 160;                  // the auto cutoff never goes above this (time bound)
};

struct PointResult {
  Status status = Status::not_computed;
  double success_probability = 0.0;      // Tr of the heralded, unnormalised state
  double negativity = 0.0;
  double log_negativity = 0.0;
  double fidelity = 0.0;                 // Braunstein-Kimble, unit gain, coherent inputs
  double false_herald_fraction = 0.0;    // 1 - P_genuine / P
  /// sqrt(ledger / P): the error scale of the figures due to the cutoff. The ledger / P itself
  /// bounds the relative error of P; the normalised heralded state is only bounded to
  /// ~2 sqrt(ledger / P) in trace norm (the dropped tail's coherences with the kept part:
  /// Cauchy-Schwarz after the heralding map, the gentle-measurement lemma; see
  /// heraldry/fock.hpp), and E_N follows it: a TMSV truncated with ledger 1e-10 is off by
  /// ~1e-5 in E_N. Reporting the square root makes `tolerance` a bound on the figures.
  double truncation_error = 0.0;
  double amplifier_cut_fraction = 0.0;   // largest input weight above N cut by an amplify step
  int cutoff = 0;                        // the cutoff the figures were computed at
  int cutoff_needed = 0;                 // the cutoff the tolerance needs (estimate if missed)
};

/// Evaluates one point. Leading link/loss steps act on the covariance matrix; the state is then
/// converted to Fock space once (closed form) and the remaining steps act as Kraus sums.
/// Auto cutoff: from the Gaussian estimate (fock::auto_cutoff_gaussian on the prefix state),
/// raised (x1.25 + 2, or by extrapolating the geometric decay of the error once two cutoffs
/// are known) until truncation_error = sqrt(ledger / P) <= tolerance. The conversion ledger is the Gaussian trace
/// deficit computed directly, so tolerances far below 1e-16 P are reachable.
/// Numerical outcomes are statuses, never exceptions: truncation_budget_missed when the
/// tolerance needs more memory than max_memory_bytes, when a fixed cutoff misses it, or when the
/// error stops falling with the cutoff (cutoff_needed: the cutoff the tolerance needs,
/// extrapolated); herald_below_roundoff when P < 1e-300 or P does not exceed the truncation
/// ledger (the figures are then 0 but P). Figures are never NaN; invalid_result (figures 0) if
/// a guard catches a non-finite one or one outside its range by more than round-off (P, F and
/// the false-herald fraction in [0, 1] within 1e-12 / 1e-9, N and E_N >= -1e-9); a value
/// outside by round-off only is set to the bound it crossed. A protocol with counters but no dark counts has no false heralds
/// (0 without a second run); otherwise the steps run a second time with genuine weights.
/// Throws InputError for inconsistent input (a counter index out of range, a parameter out of
/// its domain, a fixed cutoff whose state does not fit in max_memory_bytes).
PointResult evaluate(const PointSpec& spec);

/// The counters the steps of a protocol use (for trial_rate_hz), scissors counting its counter
/// once.
std::vector<CounterModel> counters_used(const std::vector<StepSpec>& steps,
                                        const std::vector<CounterModel>& counters);

}  // namespace heraldry::steps
