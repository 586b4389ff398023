// The point pipeline: everything one grid point needs (PointSpec, SI units, resolved), the one
// evaluator every command calls (Gaussian prefix on the covariance matrix -> the evaluation path
// -> measures -> heralding rate, all in the PointResult), the table of the result's fields that
// the file writer, the MPI wire format, the JSON output and the verdict iterate over, and the
// Gaussian baselines (bare link, midpoint relay, link table, crossings, capacity bounds).
// Physics only: no TOML, HDF5, MPI or OpenMP here.
#pragma once

#include <atomic>
#include <optional>
#include <span>
#include <stdexcept>
#include <string_view>
#include <vector>

#include "heraldry/common.hpp"
#include "heraldry/crossing.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/steps.hpp"

namespace heraldry::point {

// ------------------------------------------------------------------------------ the point

/// The two-mode squeezed thermal source (docs/physics.md §1.1), or a measured state.
struct Source {
  double squeezing_r = 0.0;        // two-mode squeezing parameter r (lambda = tanh r)
  double thermal_photons = 0.0;    // per mode, at the source
  double bandwidth_hz = 1.0e6;     // mode rate: bounds the trial rate
  double frequency_hz = 5.0e9;     // carrier of both modes, unless one of the next is set
  std::optional<double> frequency_a_hz;  // a nondegenerate source: mode a's own carrier
  std::optional<double> frequency_b_hz;  // and mode b's
  /// A measured two-mode state (standard form) replacing TMST(squeezing_r, thermal_photons).
  std::optional<gaussian::StandardForm> state;
};

/// The carrier of one mode of the source.
double mode_frequency_hz(const Source& source, Mode mode);

/// How the Fock engine truncates.
struct Numerics {
  fock::Engine engine = fock::Engine::sector;
  int cutoff = 0;                          // per-mode photon-number cutoff; 0 = auto
  double tolerance = 1e-10;                // truncation budget (relative, on the heralded state)
  double max_memory_bytes = 4.0 * 1024 * 1024 * 1024;  // per state, for the auto cutoff
  int max_cutoff = 160;                    // the auto cutoff never goes above this (time bound)
  /// Polled during the evaluation (between steps, cutoff rounds and rows of long sums): when
  /// set, evaluate throws Cancelled. Null: never cancelled.
  const std::atomic<bool>* cancel = nullptr;
};

/// Thrown by evaluate when Numerics::cancel is set: the point has no result.
using Cancelled = heraldry::Cancelled;

/// Everything one evaluation needs, resolved (SI units, no ranges).
struct PointSpec {
  Source source;
  link::Channel channel_a;                 // applied to mode A by the `link` step
  link::Channel channel_b;                 // applied to mode B by the `link` step
  std::vector<steps::StepSpec> steps;
  std::vector<steps::CounterModel> counters;
  Numerics numerics;
};

struct PointResult {
  Status status = Status::not_computed;
  Method method = Method::none;          // the path the figures were computed on
  double success_probability = 0.0;      // Tr of the heralded, unnormalised state
  double negativity = 0.0;
  double log_negativity = 0.0;
  double fidelity = 0.0;                 // Braunstein-Kimble, unit gain, coherent inputs
  double heralding_rate_hz = 0.0;        // trial rate x success probability
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
  /// 1 when `fidelity` holds the bound 1/2 of a separable resource (Braunstein, Fuchs & Kimble,
  /// J. Mod. Opt. 47, 267 (2000)) rather than a computed value (photon-number path).
  int fidelity_bound = 0;
};

/// Evaluates one point. Leading Gaussian steps (link, loss) act on the covariance matrix; the
/// state is then converted to Fock space once (closed form) and the remaining steps act as
/// Kraus sums. Auto cutoff: from the Gaussian estimate (fock::auto_cutoff_gaussian on the prefix
/// state), raised (x1.25 + 2, or by extrapolating the geometric decay of the error once two
/// cutoffs are known) until truncation_error = sqrt(ledger / P) <= tolerance. The conversion
/// ledger is the Gaussian trace deficit computed directly, so tolerances far below 1e-16 P are
/// reachable. The heralding rate is the trial rate (the source bandwidth and the counters' gate
/// and dead time, steps::trial_rate_hz) times P.
/// Numerical outcomes are statuses, never exceptions: truncation_budget_missed when the
/// tolerance needs more memory than max_memory_bytes, when a fixed cutoff misses it, or when the
/// error stops falling with the cutoff (cutoff_needed: the cutoff the tolerance needs,
/// extrapolated); herald_below_roundoff when P < 1e-300 or P does not exceed the truncation
/// ledger (the figures are then 0 but P). Figures are never NaN; invalid_result (figures 0) if
/// a guard catches a non-finite one or one outside its range by more than round-off (P, F and
/// the false-herald fraction in [0, 1] within 1e-12 / 1e-9, N and E_N >= -1e-9); a value
/// outside by round-off only is set to the bound it crossed. A protocol with counters but no
/// dark counts has no false heralds (0 without a second run); otherwise the steps run a second
/// time with genuine weights.
/// Throws InputError for inconsistent input (a counter index out of range, a parameter out of
/// its domain, a fixed cutoff whose state does not fit in max_memory_bytes).
PointResult evaluate(const PointSpec& spec);

// ------------------------------------------------------------------------------ the fields

/// One figure of a PointResult as the outside world sees it: its name (HDF5 dataset, JSON key,
/// verdict attribute), units, meaning and storage type, and how to read and write it as a
/// double (integers and enumerations are exact in a double). `label`, for an enumeration, turns
/// the value into words ("ok"). `figure`: a computed quantity (blank in JSON when the status
/// says the point has no figures) rather than bookkeeping.
struct Field {
  std::string_view name;
  std::string_view units;
  std::string_view description;
  bool integer = false;
  bool figure = true;
  double (*get)(const PointResult&) = nullptr;
  void (*set)(PointResult&, double) = nullptr;
  const char* (*label)(double) = nullptr;
};

/// Every field of a PointResult, in a fixed order. A new figure of merit is its measure, one
/// line in src/point/fields.cpp and the line of the evaluator that fills it.
std::span<const Field> result_fields();
/// The field named `name`, or nullptr.
const Field* find_field(std::string_view name);

// ------------------------------------------------------------------------------ baselines

/// The source's two-mode state: the measured one, or TMST(r, n) (docs/physics.md §1.1).
gaussian::StandardForm source_state(const Source& source);

/// The bare link of a resolved point: its source through its link channels.
gaussian::StandardForm bare_state(const PointSpec& spec);

/// The bare link: the source state through the link's channels (Gaussian, exact).
gaussian::StandardForm bare_state(const Source& source, const link::LinkBudget& budget);
gaussian::StandardForm bare_state(const Source& source, const link::LinkModel& model, double distance_m);

/// Signed log-negativity -log2 nu~_- of the bare link (negative when separable): smooth through
/// the threshold, so root finding can refine where E_N vanishes.
double bare_signed_log_negativity(const Source& source, const link::LinkModel& model, double distance_m);

/// The midpoint-relay baseline at distance d: two copies of the source, each sending mode b over
/// d/2 (the one-way link model at half the distance) to a station that makes an ideal CV Bell
/// measurement (Gaussian entanglement swapping, docs/physics.md §9; van Loock & Braunstein, PRA
/// 61, 010302(R) (2000)); the conditional state of the two a modes. Needs a modelled link
/// (std::logic_error for measured [link.direct] channels).
gaussian::StandardForm relay_state(const Source& source, const link::LinkModel& model, double distance_m);

/// Two-way capacity bounds of the link (ebit per use; Pirandola et al. 2017 and 2009): the
/// one-way channel of mode b, or the weaker arm for the midpoint geometry (each arm is a cut
/// between the two receivers). A lossless path has an unbounded capacity: +infinity.
double plob_ebits(const link::LinkBudget& budget, link::Geometry geometry);
double rci_ebits(const link::LinkBudget& budget, link::Geometry geometry);

/// The bare link at one distance: budget, state, figures, bounds, relay.
struct LinkPoint {
  double distance_m = 0.0;
  link::LinkBudget budget;
  gaussian::StandardForm state;
  double negativity = 0.0, log_negativity = 0.0, fidelity = 0.0;
  double plob_ebits = 0.0, rci_ebits = 0.0;
  std::optional<double> relay_log_negativity, relay_fidelity;   // absent for measured channels
};
LinkPoint link_point(const Source& source, const link::LinkModel& model, double distance_m);

/// The bare link on a distance grid, column by column (the /link and /gaussian datasets).
/// Capacities of lossless paths are stored as the largest double instead of infinity.
struct LinkTable {
  std::vector<double> transmissivity_a, transmissivity_b, bath_photons_a, bath_photons_b;
  std::vector<double> negativity, log_negativity, fidelity, plob_ebits, rci_ebits;
  /// Baseline: a relay station at the midpoint; empty for measured [link.direct] channels.
  std::vector<double> relay_log_negativity, relay_fidelity;
};
LinkTable link_table(const Source& source, const link::LinkModel& model, std::span<const double> grid);

/// Where the bare link stops being entangled (E_N > 0) and stops beating the classical
/// teleportation fidelity 1/2, along an increasing grid (at least two points). The Gaussian
/// layer is instant: a crossing beyond the grid is found by scanning on up to 1e7 m. Over pure
/// loss (no bath anywhere on the path) an entangled source never becomes separable: the survival
/// is Crossing::Kind::never_crosses.
struct BareCrossings {
  Crossing survival;
  Crossing fidelity_half;
};
BareCrossings bare_crossings(const Source& source, const link::LinkModel& model, std::span<const double> grid);

}  // namespace heraldry::point
