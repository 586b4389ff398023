// The heralded relay: a station at the midpoint, two identical arms (a source at each end sending
// mode b over half the distance, its heralded steps), an unconditional unit-gain swap of the two
// heralded pairs at the station (heraldry/swap.hpp), figures of the outcome-averaged state of the
// two a modes that the station hands on. docs/relay.md. Physics only.
#pragma once

#include "heraldry/point.hpp"

namespace heraldry::point {

struct RelaySpec {
  /// One arm as a point: the source, channel_a the identity (mode a stays at its end),
  /// channel_b the link over half the distance, the arm's steps (a `link` step first) and
  /// counters, and the numerics (the tolerance is the relay's: each arm is evaluated at a
  /// tighter one).
  PointSpec arm;
  double bell_efficiency = 1.0;  // homodyne efficiency of the station's Bell measurement, (0, 1]
  /// Feed-forward gain of the correction (1: unit gain). Other gains carry a round-off floor of
  /// ~1e-13 of the trace in the ledger, so tolerances below ~1e-6 are missed (docs/relay.md).
  double gain = 1.0;
};

struct RelayResult {
  /// The relay's figures: P = P_arm^2 (both arms herald in the same trial: no quantum memory),
  /// rate = trial rate x P_arm^2, false heralds 1 - (1 - f_arm)^2, E_N, N and F of the swapped
  /// state, its truncation error, cutoff = the output cutoff, cutoff_needed the arm's.
  PointResult relay;
  PointResult arm;  // one arm on its own (pair at the station), at the arm's tolerance
};

/// The arm of a midpoint relay at distance d: `spec` with channel_a the identity and channel_b
/// the one-way link model at d/2 (as relay_state's arms). std::logic_error for measured channels.
PointSpec relay_arm(const PointSpec& spec, const link::LinkModel& model, double distance_m);

/// Evaluates the relay. The arm goes through evaluate() (its cutoff, P, false heralds) at
/// tolerance tol/2, its heralded state is rebuilt at that cutoff, swapped with a copy of itself,
/// and the output cutoff is chosen so that the weight dropped is <= tol^2 P_arm^2 / 4: the
/// relay's truncation error sqrt(ledger / P) then stays <= tol (status truncation_budget_missed
/// otherwise). An arm without figures gives its status to the relay. Throws InputError as
/// evaluate() does, for a Bell efficiency outside (0, 1] (key relay.bell_efficiency) and for a
/// gain that is not a finite number > 0 (key relay.gain).
RelayResult evaluate_relay(const RelaySpec& spec);

}  // namespace heraldry::point
