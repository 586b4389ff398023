// Entanglement swapping of two phase-symmetric pairs in the truncated Fock space, as a channel
// on one mode (docs/relay.md).
//
// Two pairs, (a1, b1) and (a2, b2), each a SectorState with its a mode as mode A. A station holds
// b1 and b2, makes a continuous-variable Bell measurement on them (a 50:50 beam splitter and two
// homodyne detectors) and the outcome displaces a2 with unit gain. Averaged over the outcomes,
// the state of (a1, a2) is pair 1 with mode b1 sent through the unit-gain teleportation channel
// whose resource is pair 2 (b2 the sender's mode, a2 the receiver's; Braunstein & Kimble, PRL 80,
// 869 (1998)). In characteristic functions (Marian & Marian, PRA 74, 042306 (2006)):
//   chi_out(xi_1, xi) = chi_1(xi_1, xi) w(xi),   w(xi) = chi_2(xi, xi*)   (a2 gets xi, b2 xi*),
// i.e. a random displacement, rho -> int d^2beta P(beta) D(beta) rho D(beta)^dag, whose weight
// P is the probability density of the commuting pair of "EPR quadratures" of the resource, the
// normal operator K = a2 - b2^dag: P(beta) = <delta^2(K - beta)> = (1/pi) <<beta| rho_2 |beta>>,
// |beta>> = D_{a2}(beta) sum_n |n>_{a2} |n>_{b2}. Both pairs are U(1)-symmetric, so P is radial
// and the channel keeps the blocks of fixed photon-number difference. It is applied here on b1
// alone, never on a four-mode state: O(N^4).
//
// A Bell measurement whose homodyne detectors have efficiency eta < 1, with the outcomes scaled
// by 1/sqrt(eta) (so the gain stays one), adds Gaussian noise of variance 2 (1 - eta) / eta (shot
// -noise units) to each output quadrature: w(xi) -> w(xi) exp[-(1 - eta)/eta |xi|^2]. That is the
// additive-noise channel (pure loss eta, then a quantum-limited amplifier of gain 1/eta) on a2 of
// the resource before P is taken, which is how it is applied.
//
// A feed-forward gain g != 1 (the displacement of a2 is g times the outcome) gives
// chi_out(xi_1, xi) = chi_1(xi_1, g xi) chi_2(a2: xi, b2: g xi*); the noise operator a2 - g b2^dag
// is then not normal, so the channel is no random displacement with a positive weight. It is
// applied as pure loss g^2 (g < 1) or the amplifier g^2 (g > 1) on b1 followed by the
// multiplication of the characteristic function by a radial weight, again exact by a
// Gauss-Laguerre rule (docs/relay.md); its dropped weight is then a difference of sums, with an
// absolute round-off of ~1e-16.
#pragma once

#include "heraldry/fock.hpp"

namespace heraldry::fock {

struct SwapOptions {
  /// Homodyne efficiency of the Bell measurement, in (0, 1].
  double bell_efficiency = 1.0;
  /// Feed-forward gain g > 0 (1: unit gain). With g > 1 the input is embedded at a cutoff half
  /// as high again before the amplifier, and the output cutoff must be at least that.
  double gain = 1.0;
  /// The output's per-mode cutoff; 0: the smallest >= the input cutoffs whose dropped weight
  /// (the output a2 tail) is at most max(max_dropped, L1 Tr rho_2 + Tr rho_1 L2), the weight the
  /// inputs' own truncation already leaves uncertain (and at most max_output_cutoff).
  int output_cutoff = 0;
  double max_dropped = 1e-20;
  int max_output_cutoff = 400;
};

/// The outcome-averaged state of (a1, a2) after the unit-gain swap (a1 as mode A, a2 as mode B),
/// unnormalised: trace = Tr rho_1 Tr rho_2 minus the weight dropped above the output cutoff.
/// Ledger: L1 Tr rho_2 + Tr rho_1 L2 + L1 L2 (the inputs' own truncation, L the ledgers;
/// L2 including what the efficiency's amplifier cut) + the dropped weight, computed directly as
/// a sum of positive terms (so it keeps its relative accuracy far below 1e-16).
/// The quadrature (Gauss-Laguerre in |beta|^2) is exact for the truncated states.
/// std::invalid_argument for an efficiency outside (0, 1], a gain that is not a finite number
/// > 0, or an output cutoff below the input cutoffs.
SectorState swap(const SectorState& first, const SectorState& second, const SwapOptions& options = {});

/// The same output's a2 photon distribution beyond the input (index n = 0..limit), without
/// building the state: what the automatic output cutoff looks at. For tests and the benchmark.
Eigen::VectorXd swap_output_distribution(const SectorState& first, const SectorState& second,
                                         double bell_efficiency, int limit);

}  // namespace heraldry::fock
