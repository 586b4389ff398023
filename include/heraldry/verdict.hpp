// The verdict: at the target distance, does each protocol beat the bare link, at what rate, and
// up to which distance?
#pragma once

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <functional>
#include <span>
#include <stdexcept>

#include "heraldry/common.hpp"
#include "heraldry/crossing.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::verdict {

struct ProtocolVerdict {
  std::string name;
  /// The evaluation at the target distance with the best setting (every field of the point).
  point::PointResult at_target;
  /// The bare link (Gaussian) at the target with the best setting's hardware (the same as the
  /// verdict's bare link unless hardware is swept): what "pays off" compares with.
  double bare_log_negativity = 0.0;
  double bare_fidelity = 0.0;
  /// Distance where the protocol stops beating the bare link, in E_N and in fidelity.
  Crossing breakeven_log_negativity;
  Crossing breakeven_fidelity;
  /// The largest distance with fidelity above 1/2.
  Crossing fidelity_half;
  /// A relay protocol over a modelled link: where it stops beating the Gaussian midpoint relay
  /// (point::relay_state with the scenario's first hardware), in E_N and in fidelity.
  std::optional<Crossing> breakeven_relay_log_negativity;
  std::optional<Crossing> breakeven_relay_fidelity;
  /// For swept parameters: the setting with the largest E_N at the target (name, value).
  std::vector<std::pair<std::string, double>> best;
  std::optional<double> seconds_for_heralds;  // [output] heralds_wanted / heralding rate
  std::size_t failed_points = 0;              // grid points whose status is not ok
  /// Every setting of the swept parameters evaluated at the target (row-major over the swept
  /// axes, in the order of the protocol's axes after distance): the detector trade map when the
  /// counter's efficiency and dark rate are swept. Empty without swept parameters.
  std::vector<std::string> slice_axes;
  std::vector<std::size_t> slice_shape;
  std::vector<point::PointResult> slice;
  std::vector<double> slice_bare_log_negativity;   // the bare link at each setting's hardware
  bool pays_off_log_negativity = false;
  bool pays_off_fidelity = false;
  std::string summary;                        // one line in words
};

struct Verdict {
  double target_m = 0.0;
  bool measured = false;                      // one measured link ([link.direct]): no distances
  double bare_log_negativity = 0.0;           // Gaussian layer, at the target
  double bare_fidelity = 0.0;
  /// The midpoint-relay baseline at the target (Gaussian swapping; absent for direct channels).
  std::optional<double> relay_log_negativity;
  std::optional<double> relay_fidelity;
  Crossing survival;                          // bare link: E_N > 0 up to
  Crossing fidelity_half;                     // bare link: F > 1/2 up to
  std::vector<ProtocolVerdict> protocols;
};

/// The verdict of a complete run from its grid results (`tables`, one per protocol of `plan`):
/// evaluates every swept setting at the target distance, keeps the best E_N, compares it with
/// the bare link of the same hardware, and refines the crossings between grid points (to 1e-4 of
/// the grid step), in parallel on `threads` threads (src/verdict/verdict.cpp). A gain below 1e-9
/// is round-off, not a gain.
/// `stop`, polled between chunks of evaluations, ends the computation early with Stopped.
Verdict compute(const scenario::Scenario& sc, const sweep::Plan& plan, std::span<const sweep::ProtocolTable> tables,
                int threads = 1, const std::function<bool()>& stop = {});

/// The verdict was asked to stop (a signal): the grid is complete, the verdict is not.
class Stopped : public std::runtime_error {
public:
  Stopped() : std::runtime_error("the verdict was interrupted") {}
};

}  // namespace heraldry::verdict
