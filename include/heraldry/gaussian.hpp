// Gaussian layer: phase-insensitive two-mode Gaussian states in standard form, thermal-loss
// channels on the covariance matrix, and their closed-form figures of merit.
// Shot-noise units (vacuum quadrature variance 1), x = a + a^dagger (docs/physics.md §0).
#pragma once

#include <string>

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

/// Two-mode squeezed thermal state: S2(r) (th(n) x th(n)) S2(r)^dagger, docs/physics.md §1.1:
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
/// docs/physics.md §6.2): [a + b - sqrt((a - b)^2 + 4 c^2)] / 2.
double smallest_pt_symplectic(const StandardForm& s);
/// Same, for a general two-mode CM (Adesso & Illuminati, PRA 72, 032334 (2005)).
double smallest_pt_symplectic(const Covariance& v);

/// Log-negativity E_N = max(0, -log2 nu~_-) and negativity N = max(0, (1/nu~_- - 1)/2)
/// (Vidal & Werner, PRA 65, 032314 (2002)).
double log_negativity(const StandardForm& s);
double negativity(const StandardForm& s);

/// Braunstein-Kimble unit-gain teleportation fidelity for coherent inputs with this resource,
/// F = 2 / (2 + a + b - 2c) (docs/physics.md §7.4).
double fidelity(const StandardForm& s);
/// General zero-mean CM: F = 2 / sqrt(det(2 I + Sigma)), Sigma the CM of (x_A - x_B, p_A + p_B).
double fidelity(const Covariance& v);

/// Two-way assisted capacity bounds of a thermal-loss channel, ebits per use (docs/physics.md §8):
/// PLOB upper bound (Pirandola et al., Nat. Commun. 8, 15043 (2017)) and the reverse coherent
/// information lower bound (Pirandola et al., PRL 102, 050503 (2009)); both 0 when
/// entanglement breaking (n_E >= tau / (1 - tau)).
double plob_bound(const link::Channel& channel);
double rci_bound(const link::Channel& channel);

/// Entanglement swapping of two standard-form pairs by an ideal CV Bell measurement on their
/// B modes; returns the conditional state of (A1, A2) (docs/physics.md §9).
StandardForm swap(const StandardForm& first, const StandardForm& second);

/// The same swap with unit-gain feed-forward on A2, averaged over the outcomes (Braunstein &
/// Kimble, PRL 80, 869 (1998); van Loock & Braunstein, PRA 61, 010302(R) (2000)): mode B1 is
/// teleported to A2 through the second pair, so (A1, A2) is the first pair with
/// b -> b + (a2 + b2 - 2 c2) + 2 (1 - eta) / eta, a and c kept (eta: the homodyne efficiency
/// of the Bell measurement, outcomes rescaled by 1/sqrt(eta)). Requires 0 < eta <= 1 (caller's
/// duty). docs/relay.md.
StandardForm swap_unit_gain(const StandardForm& first, const StandardForm& second, double bell_efficiency = 1.0);

/// The same with feed-forward gain g on A2: (a1, a2 + g^2 (b1 + b2) - 2 g c2 + g^2 2 (1 - eta)/eta,
/// g c1). The gain g = (c1 + c2)/(b1 + b2) gives the fidelity of the conditional state swap()
/// (closed form: both are 2/(2 + a1 + a2 - (c1 + c2)^2/(b1 + b2))). docs/relay.md.
StandardForm swap_feed_forward(const StandardForm& first, const StandardForm& second, double gain,
                               double bell_efficiency = 1.0);

// ------------------------------------------------------------------ the source as measured
//
// Conventions: shot-noise units (vacuum quadrature variance 1, x = a + a^dagger), quadrature
// order (x_A, p_A, x_B, p_B), zero mean. A local phase rotation of mode k by theta (a -> a
// e^{i theta}) acts on its (x, p) as R(theta) = [[cos, -sin], [sin, cos]].

/// EPR variances relative to vacuum: squeezed V_- = Var(x_A - x_B)/2 = Var(p_A + p_B)/2,
/// antisqueezed V_+ = Var(x_A + x_B)/2 = Var(p_A - p_B)/2 (closed form for the standard form:
/// V_-+ = (a + b -+ 2c)/2; a TMST has (2 n_th + 1) e^{-+2r}).
struct EprVariances {
  double squeezed = 1.0;
  double antisqueezed = 1.0;
};
EprVariances epr_variances(const StandardForm& s);

/// The symmetric TMST parameters of a source.
struct TmstParameters {
  double r = 0.0;                // squeezing parameter
  double thermal_photons = 0.0;  // n_th per mode
};

/// The TMST with the measured squeezing S and antisqueezing A in dB (V_- = 10^{-S/10},
/// V_+ = 10^{A/10}): (2n + 1) e^{-2r} = V_-, (2n + 1) e^{2r} = V_+, i.e. r = (S + A) ln10 / 40,
/// 2n + 1 = 10^{(A - S)/20} (closed form). Throws InputError for a non-finite value (key
/// source.measured_squeezing_db or source.measured_antisqueezing_db), for V_- V_+ < 1 (A < S:
/// below the uncertainty relation; key source.measured_antisqueezing_db, the product named), and
/// for V_+ < V_- (A < -S: the two variances swapped).
TmstParameters tmst_from_measured_db(double squeezing_db, double antisqueezing_db);

/// How a measured covariance matrix is written.
enum class VacuumVariance {
  one,      // x = a + a^dagger (shot-noise units, this tool's)
  half,     // x = (a + a^dagger)/sqrt 2 (hbar = 1): multiplied by 2
  quarter   // x = (a + a^dagger)/2 (common in microwave experiments): multiplied by 4
};
enum class QuadratureOrder {
  interleaved,  // (x_A, p_A, x_B, p_B)
  grouped       // (x_A, x_B, p_A, p_B)
};
struct CovarianceConvention {
  VacuumVariance vacuum = VacuumVariance::one;
  QuadratureOrder order = QuadratureOrder::interleaved;
};

/// The matrix in this tool's convention (scaled to vacuum variance 1, reordered to interleaved).
/// No check.
Covariance to_shot_noise_units(const Covariance& measured, CovarianceConvention convention);

/// Local phase rotations: V -> (R(theta_a) + R(theta_b)) V (R(theta_a) + R(theta_b))^T
/// (direct sum), shot-noise units, interleaved order.
Covariance rotate(const Covariance& v, double theta_a, double theta_b);

/// Smallest symplectic eigenvalue nu_- of a two-mode CM (the eigenvalues of |i Omega V| are
/// nu_-, nu_-, nu_+, nu_+), to round-off also for a degenerate spectrum (pure states); 0 when V
/// is not positive definite. The state is physical iff V > 0 and nu_- >= 1 (Pirandola, Serafini
/// & Lloyd, PRA 79, 052327 (2009), on when a 4x4 matrix is a two-mode CM; the invariants
/// give nu_-+^2 = [D -+ sqrt(D^2 - 4 det V)]/2, D = det A + det B + 2 det C).
double smallest_symplectic(const Covariance& v);

/// The relative size of the phase-sensitive part of each block (invariant under local phase
/// rotations; all zero for the standard form). Write A = a I + A_s with a = tr A / 2 and A_s
/// traceless symmetric: asymmetry.a = |A_s| / a with |A_s| = sqrt(((A11 - A22)/2)^2 + A12^2),
/// which is (lambda_max - lambda_min)/(lambda_max + lambda_min) of A; the same for B. Write
/// C = C_r + C_z with C_r = alpha I + beta J (a scaled rotation, J = [[0, -1], [1, 0]]) and C_z =
/// gamma Z + delta X (a scaled reflection): the standard form has C_r = 0, so asymmetry.c =
/// sqrt(alpha^2 + beta^2) / sqrt(a b). The three are what the twirl over the engine's phase
/// symmetry (R(phi) on A, R(-phi) on B) removes.
struct PhaseAsymmetry {
  double a = 0.0;
  double b = 0.0;
  double c = 0.0;
  double largest() const;
};

/// A measured covariance matrix, checked and reduced.
struct MeasuredState {
  StandardForm form;              // its phase-symmetric part in standard form (c >= 0)
  PhaseAsymmetry asymmetry;       // what the reduction left out
  double rotation_a_rad = 0.0;    // the local rotations that bring C_z to c Z:
  double rotation_b_rad = 0.0;    //   rotate(v, rotation_a_rad, rotation_b_rad) ~ covariance(form)
  double smallest_symplectic = 1.0;  // of the measured matrix (>= 1 within round-off)
};

/// Checks a measured matrix and brings it to standard form. In order, each failure an
/// InputError with key `key` (file "", line 0): entries finite; symmetric (largest |V_ij - V_ji|
/// <= roundoff x the largest |V_ij|, named); positive definite; physical, V + i Omega >= 0 in
/// shot-noise units, i.e. smallest_symplectic >= 1 - roundoff (the eigenvalue named; a wrong
/// vacuum-variance convention is the usual cause). Then the symmetric part (V + V^T)/2 is
/// reduced: a = tr A / 2, b = tr B / 2, c = |C_z|, and the local rotations (all on mode b,
/// rotation_a_rad = 0) that turn C_z into c Z. The engine handles only phase-symmetric states:
/// this returns the phase-sensitive part it drops in `asymmetry` and leaves the decision to the
/// caller (standard_form_from_measured refuses). The reduced form is the twirl of the measured
/// state over the engine's phase symmetry, a physical state whenever the measured one is.
/// The matrix is the covariance about the mean (V_ij = <{dr_i, dr_j}>/2); a mean is removed by
/// local displacements, which change no entanglement measure here, and the engine assumes zero.
MeasuredState analyse_measured_covariance(const Covariance& measured,
                                          CovarianceConvention convention,
                                          double roundoff = 1e-10,
                                          const std::string& key = "source.covariance");

/// analyse_measured_covariance, then refuses (InputError, key `key`, the largest relative
/// asymmetry as the value and each block's in the message) a matrix whose phase-sensitive part
/// exceeds max_phase_asymmetry; returns the standard form otherwise.
StandardForm standard_form_from_measured(const Covariance& measured,
                                         CovarianceConvention convention,
                                         double max_phase_asymmetry = 1e-9,
                                         double roundoff = 1e-10,
                                         const std::string& key = "source.covariance");

}  // namespace heraldry::gaussian
