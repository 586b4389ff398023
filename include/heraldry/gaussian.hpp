// Gaussian layer: phase-insensitive two-mode Gaussian states in standard form, thermal-loss
// channels on the covariance matrix, and their closed-form figures of merit.
// Shot-noise units (vacuum quadrature variance 1), x = a + a^dagger (PHYSICS.md §0).
#pragma once

#include <Eigen/Core>

#include "heraldry/common.hpp"
#include "heraldry/link.hpp"

namespace heraldry::gaussian {

/// V = [[a I, c Z], [c Z, b I]], Z = diag(1, -1), c >= 0 (x correlated, p anti-correlated).
struct StandardForm {
  double a = 1.0;
  double b = 1.0;
  double c = 0.0;
};

using Covariance = Eigen::Matrix4d;  // quadrature order (x_A, p_A, x_B, p_B)

/// Two-mode squeezed thermal state: S2(r) (th(n) x th(n)) S2(r)^dagger, PHYSICS.md §1.1:
/// a = b = (2n + 1) cosh 2r, c = (2n + 1) sinh 2r.
StandardForm tmst(double r, double thermal_photons);

/// The thermal-loss channel on one mode: b' = tau b + (1 - tau)(2 n_E + 1), c' = sqrt(tau) c.
StandardForm apply(const StandardForm& s, Mode mode, const link::Channel& channel);

/// A quantum-limited amplifier of gain G >= 1 on one mode: b' = G b + (G - 1), c' = sqrt(G) c.
StandardForm amplify(const StandardForm& s, Mode mode, double gain);

Covariance covariance(const StandardForm& s);

/// True when the CM obeys the uncertainty relation V + i Omega >= 0 (standard form:
/// c^2 <= min{(a-1)(b+1), (a+1)(b-1)}, a, b >= 1), within a relative round-off `slack`.
bool is_physical(const StandardForm& s, double slack = 1e-12);

/// Smallest symplectic eigenvalue of the partially transposed CM (standard form,
/// PHYSICS.md §6.2): [a + b - sqrt((a - b)^2 + 4 c^2)] / 2.
double smallest_pt_symplectic(const StandardForm& s);
/// Same, for a general two-mode CM (Adesso & Illuminati, PRA 72, 032334 (2005)).
double smallest_pt_symplectic(const Covariance& v);

/// Log-negativity E_N = max(0, -log2 nu~_-) and negativity N = max(0, (1/nu~_- - 1)/2)
/// (Vidal & Werner, PRA 65, 032314 (2002)).
double log_negativity(const StandardForm& s);
double negativity(const StandardForm& s);

/// Braunstein-Kimble unit-gain teleportation fidelity for coherent inputs with this resource,
/// F = 2 / (2 + a + b - 2c) (PHYSICS.md §7.4).
double fidelity(const StandardForm& s);
/// General zero-mean CM: F = 2 / sqrt(det(2 I + Sigma)), Sigma the CM of (x_A - x_B, p_A + p_B).
double fidelity(const Covariance& v);

/// Two-way assisted capacity bounds of a thermal-loss channel, ebits per use (PHYSICS.md §8):
/// PLOB upper bound (Pirandola et al., Nat. Commun. 8, 15043 (2017)) and the reverse coherent
/// information lower bound (Pirandola et al., PRL 102, 050503 (2009)); both 0 when
/// entanglement breaking (n_E >= tau / (1 - tau)).
double plob_bound(const link::Channel& channel);
double rci_bound(const link::Channel& channel);

/// Entanglement swapping of two standard-form pairs by an ideal CV Bell measurement on their
/// B modes; returns the conditional state of (A1, A2) (PHYSICS.md §9).
StandardForm swap(const StandardForm& first, const StandardForm& second);

}  // namespace heraldry::gaussian
