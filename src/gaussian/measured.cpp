// The source as measured: EPR squeezing and antisqueezing, or a measured covariance matrix,
// checked and brought to the standard form the engine handles. Conventions in gaussian.hpp.
#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>
#include <string>

#include <Eigen/Cholesky>
#include <Eigen/LU>

#include "heraldry/common.hpp"
#include "heraldry/gaussian.hpp"

namespace heraldry::gaussian {

namespace {

std::string shown(double x) {
  std::ostringstream s;
  s.precision(10);
  s << x;
  return s.str();
}

// Kept out of line and cold, like the link module's checks (the message formatting stays out of
// the kernels).
[[noreturn, gnu::cold]] void fail(const std::string& key, double value, const std::string& expected,
                                  const std::string& hint = {}) {
  throw InputError("", 0, key, shown(value), expected, hint);
}

}  // namespace

EprVariances epr_variances(const StandardForm& s) {
  return {0.5 * (s.a + s.b - 2.0 * s.c), 0.5 * (s.a + s.b + 2.0 * s.c)};
}

TmstParameters tmst_from_measured_db(double squeezing_db, double antisqueezing_db) {
  const std::string key_s = "source.measured_squeezing_db";
  const std::string key_a = "source.measured_antisqueezing_db";
  if (!std::isfinite(squeezing_db)) fail(key_s, squeezing_db, "a finite squeezing in dB");
  if (!std::isfinite(antisqueezing_db)) fail(key_a, antisqueezing_db, "a finite antisqueezing in dB");
  // V_- V_+ = 10^{(A - S)/10} >= 1: A >= S, allowing the round-off of a pair written from the
  // same variances (a few ulp of the larger value).
  const double slack = 1e-12 * std::max({1.0, std::abs(squeezing_db), std::abs(antisqueezing_db)});
  const double excess_db = antisqueezing_db - squeezing_db;
  if (excess_db < -slack)
    fail(key_a, antisqueezing_db,
         "an antisqueezing >= the squeezing (V_- V_+ >= 1, the uncertainty relation)",
         "V_- V_+ = " + shown(std::pow(10.0, excess_db / 10.0)) + " < 1 is unphysical");
  // r >= 0: V_+ >= V_-, i.e. A >= -S.
  if (antisqueezing_db + squeezing_db < -slack)
    fail(key_a, antisqueezing_db,
         "an antisqueezed variance V_+ >= the squeezed V_- (A >= -S)",
         "V_- = " + shown(std::pow(10.0, -squeezing_db / 10.0)) + " exceeds V_+ = " +
             shown(std::pow(10.0, antisqueezing_db / 10.0)) + ": the two look swapped");
  TmstParameters out;
  out.r = std::max(0.0, (squeezing_db + antisqueezing_db) * std::numbers::ln10 / 40.0);
  // 2n + 1 = 10^{(A - S)/20}: n = expm1((A - S) ln10 / 20) / 2, exact near n = 0.
  out.thermal_photons = std::max(0.0, 0.5 * std::expm1(excess_db * std::numbers::ln10 / 20.0));
  return out;
}

Covariance to_shot_noise_units(const Covariance& measured, CovarianceConvention convention) {
  const double scale = convention.vacuum == VacuumVariance::one    ? 1.0
                       : convention.vacuum == VacuumVariance::half ? 2.0
                                                                   : 4.0;
  if (convention.order == QuadratureOrder::interleaved) return scale * measured;
  // grouped (x_A, x_B, p_A, p_B) -> interleaved (x_A, p_A, x_B, p_B): new i <- old from[i].
  constexpr int from[4] = {0, 2, 1, 3};
  Covariance v;
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 4; ++j) v(i, j) = scale * measured(from[i], from[j]);
  return v;
}

Covariance rotate(const Covariance& v, double theta_a, double theta_b) {
  Covariance r = Covariance::Zero();
  const double ca = std::cos(theta_a), sa = std::sin(theta_a);
  const double cb = std::cos(theta_b), sb = std::sin(theta_b);
  r(0, 0) = ca, r(0, 1) = -sa, r(1, 0) = sa, r(1, 1) = ca;
  r(2, 2) = cb, r(2, 3) = -sb, r(3, 2) = sb, r(3, 3) = cb;
  return r * v * r.transpose();
}

double smallest_symplectic(const Covariance& v) {
  // With V = L L^T (Cholesky), Omega V is similar to the real antisymmetric K = L^T Omega L,
  // whose eigenvalues are +-i nu_1, +-i nu_2. A 4x4 antisymmetric matrix splits into a
  // self-dual and an anti-self-dual part, 3-vectors u = k + k* and w = k - k* with
  // k = (K01, K02, K03), k* = (K23, K31, K12); rotations act on them separately, so the block
  // form diag(nu_1 J, nu_2 J) gives nu_-+ = | |u| -+ |w| | / 2 (closed form). Unlike the route
  // through the invariants det V and det A + det B + 2 det C, whose discriminant vanishes for a
  // degenerate spectrum (any pure state, nu_1 = nu_2 = 1) and loses half the digits there, this
  // keeps nu_- to round-off.
  const Eigen::LLT<Covariance> llt(v);
  if (llt.info() != Eigen::Success) return 0.0;
  const Covariance l = llt.matrixL();
  Covariance omega = Covariance::Zero();
  omega(0, 1) = omega(2, 3) = 1.0;
  omega(1, 0) = omega(3, 2) = -1.0;
  const Covariance k = l.transpose() * omega * l;
  auto anti = [&](int i, int j) { return 0.5 * (k(i, j) - k(j, i)); };
  const double p[3] = {anti(0, 1), anti(0, 2), anti(0, 3)};
  const double q[3] = {anti(2, 3), anti(3, 1), anti(1, 2)};
  const double u = std::hypot(p[0] + q[0], p[1] + q[1], p[2] + q[2]);
  const double w = std::hypot(p[0] - q[0], p[1] - q[1], p[2] - q[2]);
  return 0.5 * std::abs(u - w);
}

double PhaseAsymmetry::largest() const { return std::max({a, b, c}); }

MeasuredState analyse_measured_covariance(const Covariance& measured,
                                          CovarianceConvention convention, double roundoff,
                                          const std::string& key) {
  if (!(std::isfinite(roundoff) && roundoff >= 0.0))
    throw std::invalid_argument("analyse_measured_covariance: roundoff must be finite and >= 0");
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 4; ++j)
      if (!std::isfinite(measured(i, j)))
        fail(key, measured(i, j), "a covariance matrix with finite entries",
             "entry (" + std::to_string(i + 1) + ", " + std::to_string(j + 1) + ")");

  const Covariance v = to_shot_noise_units(measured, convention);
  const double largest_entry = v.cwiseAbs().maxCoeff();
  const double skew = (v - v.transpose()).cwiseAbs().maxCoeff();
  if (skew > roundoff * largest_entry)
    fail(key, skew / largest_entry,
         "a symmetric covariance matrix (|V_ij - V_ji| within round-off of the largest entry)",
         "largest |V_ij - V_ji| relative to the largest entry");
  const Covariance vs = 0.5 * (v + v.transpose());

  // Positive definite: the Cholesky factorisation exists; the message names the first leading
  // principal minor <= 0 (Sylvester's criterion).
  if (Eigen::LLT<Covariance>(vs).info() != Eigen::Success) {
    int order = 4;
    double minor = vs.determinant();
    for (int k = 1; k <= 4; ++k) {
      const double m = vs.topLeftCorner(k, k).determinant();
      if (!(m > 0.0)) {
        order = k;
        minor = m;
        break;
      }
    }
    fail(key, minor, "a positive-definite covariance matrix",
         "its leading principal minor of order " + std::to_string(order) + " is not > 0");
  }
  MeasuredState out;
  out.smallest_symplectic = smallest_symplectic(vs);
  if (out.smallest_symplectic < 1.0 - roundoff)
    fail(key, out.smallest_symplectic,
         "a physical covariance matrix: V + i Omega >= 0, every symplectic eigenvalue >= 1 with "
         "vacuum variance 1",
         "the value is the smallest symplectic eigenvalue after conversion to vacuum variance 1; "
         "check the vacuum-variance convention (1, 1/2 or 1/4)");

  // Reduction to the phase-symmetric part and its standard form (see PhaseAsymmetry).
  const double a = 0.5 * (vs(0, 0) + vs(1, 1));
  const double b = 0.5 * (vs(2, 2) + vs(3, 3));
  const double alpha = 0.5 * (vs(0, 2) + vs(1, 3));  // C = [[C00, C01], [C10, C11]] at (0..1, 2..3)
  const double beta = 0.5 * (vs(1, 2) - vs(0, 3));
  const double gamma = 0.5 * (vs(0, 2) - vs(1, 3));
  const double delta = 0.5 * (vs(0, 3) + vs(1, 2));
  out.asymmetry.a = std::hypot(0.5 * (vs(0, 0) - vs(1, 1)), vs(0, 1)) / a;
  out.asymmetry.b = std::hypot(0.5 * (vs(2, 2) - vs(3, 3)), vs(2, 3)) / b;
  out.asymmetry.c = std::hypot(alpha, beta) / std::sqrt(a * b);
  // C_z = c Z R(-psi), psi = atan2(delta, gamma); rotating mode b by -psi gives c Z.
  const double c = std::hypot(gamma, delta);
  out.rotation_a_rad = 0.0;
  out.rotation_b_rad = c > 0.0 ? -std::atan2(delta, gamma) : 0.0;
  out.form = {a, b, c};
  return out;
}

StandardForm standard_form_from_measured(const Covariance& measured,
                                         CovarianceConvention convention,
                                         double max_phase_asymmetry, double roundoff,
                                         const std::string& key) {
  if (!(std::isfinite(max_phase_asymmetry) && max_phase_asymmetry >= 0.0))
    throw std::invalid_argument("standard_form_from_measured: max_phase_asymmetry must be >= 0");
  const MeasuredState m = analyse_measured_covariance(measured, convention, roundoff, key);
  if (m.asymmetry.largest() > max_phase_asymmetry)
    fail(key, m.asymmetry.largest(),
         "a phase-symmetric covariance matrix (relative phase-sensitive part <= " +
             shown(max_phase_asymmetry) + "); the engine handles only phase-symmetric states",
         "phase-sensitive part relative to its block: A " + shown(m.asymmetry.a) + ", B " +
             shown(m.asymmetry.b) + ", C " + shown(m.asymmetry.c));
  return m.form;
}

}  // namespace heraldry::gaussian
