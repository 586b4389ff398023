// Sweeps: the grid of points of every protocol (distance x each swept parameter), the mapping of a
// scenario point to the physics kernel's resolved PointSpec, and the dispatcher that evaluates
// points in parallel (OpenMP lives only in src/sweep/dispatch.cpp).
#pragma once

#include <atomic>

#include <cstddef>
#include <cstdint>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "heraldry/point.hpp"
#include "heraldry/relay.hpp"
#include "heraldry/scenario.hpp"

namespace heraldry::sweep {

/// One axis of a protocol's grid. axes[0] is always the distance.
struct Axis {
  std::string name;      // "distance_m", "tap_b.transmissivity" (step label + key), "counters.lab.efficiency"
  std::string units;     // "m", "1", "Hz", ...
  std::string description;
  std::vector<double> values;
  // Where the axis comes from (for resolve): a step parameter or a counter parameter.
  int step = -1;         // index into Protocol::steps, or -1
  int counter = -1;      // index into Scenario::counters, or -1
  std::string key;       // parameter key in the step, or "efficiency" / "dark_per_gate"
  int setting = -1;      // index into Scenario::settings (a swept hardware setting), or -1
};

struct ProtocolPlan {
  std::string name;
  std::vector<Axis> axes;
  std::vector<std::size_t> shape() const;
  std::size_t size() const;
  /// Row-major multi-index of a flat point index (distance slowest).
  std::vector<std::size_t> unflatten(std::size_t flat) const;
};

struct Plan {
  std::vector<ProtocolPlan> protocols;
  std::size_t total_points() const;
};

/// The results of one protocol's grid: one point per flat index (distance slowest) and whether
/// it has been computed.
struct ProtocolTable {
  std::vector<point::PointResult> points;
  std::vector<std::uint8_t> done;
};

Plan make_plan(const scenario::Scenario& sc);

/// The scenario's source and numerics as the point pipeline takes them.
point::Source source_of(const scenario::Scenario& sc);
point::Source source_of(const scenario::Source& source);
point::Numerics numerics_of(const scenario::Scenario& sc);

/// The resolved point of protocol p at a multi-index; `distance_m` (if >= 0) replaces the grid
/// distance (used to refine crossings between grid points).
point::PointSpec resolve(const scenario::Scenario& sc, const Plan& plan, std::size_t protocol,
                         std::span<const std::size_t> index, double distance_m = -1.0);

/// The figures of protocol p at a multi-index (`distance_m` as for resolve): point::evaluate of
/// the resolved point, or, for a relay protocol, point::evaluate_relay of its arm (the resolved
/// point with mode a kept at its end and mode b over half the distance) and the station's Bell
/// efficiency. The one evaluation every command uses. `cancel`: a stop flag polled inside the
/// evaluation (point::Cancelled when set). A kernel's input error is reported with the
/// scenario's file.
point::PointResult evaluate_point(const scenario::Scenario& sc, const Plan& plan, std::size_t protocol,
                                  std::span<const std::size_t> index, double distance_m = -1.0,
                                  const std::atomic<bool>* cancel = nullptr);

/// Applies one pin "PROTOCOL:AXIS=VALUE" to the plan (that swept axis keeps only the value).
/// InputError on the key "--set" naming what was expected (the protocol's swept axes).
void pin(Plan& plan, std::string_view setting);

/// Every protocol of the scenario at one distance (default: target_m), each swept parameter at
/// its first value unless pinned; with the bare link there.
struct ProbeRow {
  std::string name;
  point::PointResult result;
};
struct Probe {
  double distance_m = 0.0;
  point::LinkPoint link;
  std::vector<ProbeRow> protocols;
};
Probe probe(const scenario::Scenario& sc, std::optional<double> at_m = std::nullopt,
            std::span<const std::string> pins = {});

/// One column of the bare link's table on the scenario's distance grid: what `heraldry link`
/// prints, its --json and the Python module's link() return (swept hardware at its first
/// value). `format` is the column's printf conversion in the text table, `width` its width.
struct LinkColumn {
  std::string name;  // the text header and JSON key: "distance_m", "beam_dB", ..., "PLOB"
  std::string units;
  std::string description;
  int width = 9;
  const char* format = "%9.3g";
  std::vector<double> values;
};
/// The columns in the text table's order. Losses are those of the travelling mode b (per arm
/// for the midpoint geometry); the measured-link column is "meas_dB" instead of "line_dB".
std::vector<LinkColumn> link_columns(const scenario::Scenario& sc);

/// Number of threads the dispatcher uses: `requested` if > 0, else OMP_NUM_THREADS / all cores.
int thread_count(int requested);

/// Evaluates `todo` (flat indices into a list of jobs) with `threads` threads; `evaluate(job)`
/// must be thread-safe and write its own result slot. Returns after every job in `todo` has
/// been evaluated, or earlier (with the done ones marked) when `stop()` returns true between
/// chunks. `after_chunk` runs on the calling thread between chunks (checkpoints, progress).
void dispatch(std::span<const std::size_t> todo, int threads,
              const std::function<void(std::size_t job)>& evaluate,
              const std::function<bool()>& stop, const std::function<void(std::size_t done)>& after_chunk);

}  // namespace heraldry::sweep
