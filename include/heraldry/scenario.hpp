// A scenario: the user's description of a source, a link, counters, protocols and numerics,
// typed and validated, in SI units. Only src/scenario knows the file format (TOML).
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "heraldry/common.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/steps.hpp"

namespace heraldry::scenario {

/// A numeric parameter: one value, or a swept list of values (each swept parameter adds an axis).
/// A step parameter written `{ tune = [lo, hi] }` is tunable: `tune` holds its range (SI, lo < hi,
/// both inside the parameter's own bounds) for `heraldry tune`, and `values` holds the single
/// midpoint (lo + hi) / 2, which is what `run`, `probe` and `check` use.
struct Param {
  std::vector<double> values;           // at least one value, SI units
  std::optional<std::pair<double, double>> tune;  // the range [lo, hi] of a tunable parameter
  bool swept() const { return values.size() > 1; }
  double first() const { return values.front(); }
};

struct Counter;
struct Source;

/// A hardware setting the scenario sweeps (a list or range where one number is usual): the
/// source squeezing, an antenna's size or losses, the cryogenic line, a counter's gate or dead
/// time. Each adds an axis, named by its file key ("link.antenna.diameter_m"), to every protocol
/// it concerns (a counter's: the protocols that use the counter). The scenario's own structs
/// hold the first value; `apply` sets one value (as written, in the key's units) on copies of
/// them when a point is resolved.
struct SweptSetting {
  std::string name;                     // the file key
  std::string units;                    // of the values as written
  std::string description;
  std::vector<double> values;           // as written
  std::string counter;                  // a counter's setting: its name; else empty
  std::function<void(Source&, link::LinkModel&, Counter&, double)> apply;
};

struct Source {
  double frequency_hz = 5.0e9;          // both modes, unless frequency_a_hz / frequency_b_hz
  std::optional<double> frequency_a_hz; // a nondegenerate source: mode a's own carrier
  std::optional<double> frequency_b_hz; // and mode b's
  double squeezing_r = 0.0;             // squeezing parameter r, from `squeezing_db` (r = dB ln(10) / 20)
  /// `squeezing_db = { tune = [lo, hi] }`: the range of r `heraldry tune` explores; squeezing_r
  /// then holds the midpoint of the dB range for every other command.
  std::optional<std::pair<double, double>> squeezing_r_tune;
  double thermal_photons = 0.0;         // per mode, at the source
  double bandwidth_hz = 1.0e6;          // mode rate; bounds the trial rate
  /// How the source was given: "squeezing" (squeezing_db and thermal_photons), "measured"
  /// (measured_squeezing_db and measured_antisqueezing_db: squeezing_r and thermal_photons hold
  /// the equivalent symmetric TMST) or "covariance" (a measured covariance matrix: `state`).
  std::string given_as = "squeezing";
  /// The measured two-mode state in standard form ([source.covariance]); replaces TMST(r, n).
  std::optional<gaussian::StandardForm> state;
};

struct Link {
  link::LinkModel model;                // frequencies copied from the source
  std::vector<double> distances_m;      // the distance axis (a single 0 for [link.direct])
  double target_m = 0.0;                // the distance the verdict talks about
  /// Measured channels ([link.direct]): one measured link, no distance axis.
  bool measured() const { return model.direct.has_value(); }
};

// The kinds are the physics kernel's own (one list, not a parallel one to keep in step).
using CounterKind = steps::CounterKind;

struct Counter {
  std::string name;
  CounterKind kind = CounterKind::threshold;
  Param efficiency;                     // in [0, 1]
  Param dark_per_gate;                  // per-gate dark probability (threshold) or mean dark
                                        // counts per gate (resolving); from dark_rate_hz x gate
                                        // when given as a rate
  std::optional<Param> dark_rate_hz;    // as written by the user, if given as a rate
  double gate_s = 1.0e-6;
  double reset_s = 0.0;                 // dead time after a gate
};

/// One step of a protocol: its kind (an entry of the step registry), the mode it acts on, its
/// counter's name (kinds that use one) and one Param per parameter of the kind's schema, in
/// schema order and SI units (defaults filled in).
struct Step {
  const steps::StepType* type = &steps::link_type();
  Mode mode = Mode::B;                  // the mode the step acts on (not used by link)
  std::string counter;                  // kinds that use a counter: the name of a [counters.X] table
  std::vector<Param> params;            // one per type->params
  /// Its name within the protocol, used for its parameters everywhere (sweep axes, tune, --set,
  /// messages, the result file): "<kind>_<mode>" ("tap_b"), "#n" appended for the n-th step of
  /// the same kind on the same mode ("tap_b#2"), "link" for the link. A parameter is
  /// "<label>.<key>" ("tap_b.transmissivity"), and "<protocol>:<label>.<key>" with its protocol.
  std::string label = "link";
  int line = 0;                         // line in the scenario file (for messages)
  /// The parameter named `key` of the kind's schema (std::out_of_range if there is none).
  const Param& param(std::string_view key) const;
};

/// A relay station at the midpoint (`relay = { bell_efficiency = 0.9 }` in a protocol): the
/// protocol's steps run on each of two identical arms (a source at each end sending mode b over
/// half the distance; steps on "a" act on the kept mode, on "b" at the station), then the
/// station swaps the two heralded pairs with unit gain (docs/relay.md). Both arms must herald
/// in the same trial (no quantum memory): P = P_arm^2.
struct Relay {
  double bell_efficiency = 1.0;         // homodyne efficiency of the station's Bell measurement
  double gain = 1.0;                    // feed-forward gain of the correction (1: unit gain)
  int line = 0;
};

struct Protocol {
  std::string name;
  std::vector<Step> steps;
  std::optional<Relay> relay;           // a relay protocol: the figures of the swapped pair
};

enum class EngineKind { sector, dense };

struct Numerics {
  EngineKind engine = EngineKind::sector;
  int cutoff = 0;                       // per-mode photon-number cutoff; 0 means "auto"
  double tolerance = 1e-10;             // truncation budget for "auto"
  int threads = 0;                      // 0: OMP_NUM_THREADS or all cores
  double max_memory_mb = 4096.0;        // the auto cutoff refuses to exceed this per state
  int max_cutoff = 160;                 // the auto cutoff refuses to exceed this (time bound)
  /// The largest grid (points of one protocol) a scenario may ask for; parse refuses larger
  /// grids, and grids whose point count overflows, naming the axes and their sizes.
  std::int64_t max_points = 10000000;
};

struct Output {
  std::string file = "data_out/result.h5";
  std::optional<double> heralds_wanted; // heralded pairs the user wants to collect
};

struct Scenario {
  std::string title;
  std::vector<SweptSetting> settings;   // swept hardware settings (each an axis)
  std::string path;                     // where it was read from ("<demo>" for the built-in one)
  std::string text;                     // the file verbatim (stored in the results)
  Source source;
  Link link;
  std::vector<Counter> counters;
  std::vector<Protocol> protocols;
  Numerics numerics;
  Output output;

  const Counter* find_counter(std::string_view name) const;
};

/// A name as it appears in file names and HDF5 group names: letters, digits, '-', '_' and '.'
/// kept, everything else ('/', spaces, commas, ...) replaced by '_', a leading '.' by '_' (so
/// never "." or ".."), never empty. Protocol and counter names must differ in this form (parse
/// refuses two that collide).
std::string file_safe_name(std::string_view name);

/// Parses and validates a scenario (the schema of protocols/demo.toml). Throws InputError naming
/// file, line, key, value and what was expected (for an unknown key, the closest known one):
/// - key: the dotted path ("link.distance_m.points", "link.distance_m[3]"; 0-based indices for
///   array elements); a step's keys are named after its protocol and label
///   ("subtract both:tap_b.transmissivity"; "subtract both:steps[2]" for a step table without one
///   kind and one mode); "<syntax>" for a TOML syntax error;
/// - line: of the offending value, or of the table that misses a required key (none for a
///   missing top-level table);
/// - value: as written in the file (strings with their quotes); none for a missing key.
/// Units are converted to SI here: GHz, MHz -> Hz; ns, us -> s; degrees Celsius -> K; squeezing
/// in dB -> r. A step parameter written under its alternative key (a loss step's loss_db) is
/// stored as the parameter itself (transmissivity = 10^(-dB/10)). A counter's dark_rate_hz R with
/// gate t becomes dark_per_gate = steps::dark_per_gate(kind, R, t).
/// Tables that the chosen medium does not use ([link.line] with "air", [link.air] and
/// [link.antenna] with "line") are refused rather than ignored.
Scenario parse(std::string_view text, const std::string& file_name);
/// Reads a file and parses it; an unreadable file is an InputError too (key "<file>", line 0).
/// "-" reads the scenario from standard input (file name "<stdin>" in messages).
Scenario load(const std::string& path);
/// The built-in demo scenario (protocols/demo.toml, compiled in).
std::string_view demo_text();
Scenario demo();

}  // namespace heraldry::scenario
