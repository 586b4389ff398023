// Where a figure of merit stops being positive along a distance grid: the survival distance of
// entanglement, the last distance with fidelity above 1/2, the break-even of a protocol.
#pragma once

#include <functional>
#include <span>

namespace heraldry {

struct Crossing {
  enum class Kind {
    crossed,         ///< f > 0 before `distance`, f <= 0 just after it (refined root)
    never_positive,  ///< f <= 0 at the first grid point already
    beyond_grid,     ///< f > 0 at the last grid point: the crossing lies beyond the grid
    never_crosses    ///< f > 0 at every distance, provably (e.g. entanglement over pure loss)
  };
  Kind kind = Kind::never_positive;
  double distance = 0.0;  ///< the refined root (crossed), the first (never_positive) or last grid point
};

/// Scans f on the (increasing) grid for the last interval where f goes from > 0 to <= 0 and refines
/// the root there with Boost.Math's TOMS 748 bracketing solver to `abs_tolerance`.
/// `values`, if not empty, holds f at the grid points already (saves evaluations).
Crossing last_downward_crossing(const std::function<double(double)>& f, std::span<const double> grid,
                                std::span<const double> values = {}, double abs_tolerance = 1e-9);

/// For a cheap f that is still > 0 at the end of the grid: continues the scan beyond it on
/// x_k = from (1 + growth)^k up to `limit` and refines the first downward crossing found.
/// Returns kind beyond_grid with distance = limit when f stays positive up to it.
Crossing continue_crossing(const std::function<double(double)>& f, double from, double limit,
                           double growth = 0.05, double abs_tolerance = 1e-9);

}  // namespace heraldry
