#include "heraldry/gaussian.hpp"

#include <algorithm>
#include <cassert>
#include <cmath>

#include <Eigen/LU>

namespace heraldry::gaussian {

StandardForm tmst(double r, double thermal_photons) {
  const double k = 2.0 * thermal_photons + 1.0;
  return {k * std::cosh(2.0 * r), k * std::cosh(2.0 * r), k * std::sinh(2.0 * r)};
}

StandardForm apply(const StandardForm& s, Mode mode, const link::Channel& ch) {
  const double tau = ch.transmissivity;
  const double added = (1.0 - tau) * (2.0 * ch.bath_photons + 1.0);
  StandardForm out = s;
  if (mode == Mode::A)
    out.a = tau * s.a + added;
  else
    out.b = tau * s.b + added;
  out.c = std::sqrt(tau) * s.c;
  return out;
}

StandardForm amplify(const StandardForm& s, Mode mode, double gain) {
  StandardForm out = s;
  if (mode == Mode::A)
    out.a = gain * s.a + (gain - 1.0);
  else
    out.b = gain * s.b + (gain - 1.0);
  out.c = std::sqrt(gain) * s.c;
  return out;
}

Covariance covariance(const StandardForm& s) {
  Covariance v = Covariance::Zero();
  v(0, 0) = v(1, 1) = s.a;
  v(2, 2) = v(3, 3) = s.b;
  v(0, 2) = v(2, 0) = s.c;
  v(1, 3) = v(3, 1) = -s.c;
  return v;
}

bool is_physical(const StandardForm& s, double slack) {
  const double scale = std::max({1.0, s.a, s.b});
  if (s.a < 1.0 - slack * scale || s.b < 1.0 - slack * scale) return false;
  const double bound = std::min((s.a - 1.0) * (s.b + 1.0), (s.a + 1.0) * (s.b - 1.0));
  return s.c * s.c <= bound + slack * scale * scale;
}

double smallest_pt_symplectic(const StandardForm& s) {
  const double d = s.a - s.b;
  return 0.5 * (s.a + s.b - std::sqrt(d * d + 4.0 * s.c * s.c));
}

double smallest_pt_symplectic(const Covariance& v) {
  // Adesso & Illuminati, PRA 72, 032334 (2005): nu~_-^2 = [D - sqrt(D^2 - 4 det V)] / 2,
  // D = det A + det B - 2 det C.
  const Eigen::Matrix2d A = v.block<2, 2>(0, 0), B = v.block<2, 2>(2, 2), C = v.block<2, 2>(0, 2);
  const double delta = A.determinant() + B.determinant() - 2.0 * C.determinant();
  const double det = v.determinant();
  const double disc = std::max(0.0, delta * delta - 4.0 * det);
  return std::sqrt(std::max(0.0, 0.5 * (delta - std::sqrt(disc))));
}

namespace {
double log_negativity_from_nu(double nu) { return nu < 1.0 ? -std::log2(nu) : 0.0; }
double negativity_from_nu(double nu) { return nu < 1.0 ? 0.5 * (1.0 / nu - 1.0) : 0.0; }
}  // namespace

double log_negativity(const StandardForm& s) { return log_negativity_from_nu(smallest_pt_symplectic(s)); }
double negativity(const StandardForm& s) { return negativity_from_nu(smallest_pt_symplectic(s)); }

double fidelity(const StandardForm& s) { return 2.0 / (2.0 + s.a + s.b - 2.0 * s.c); }

double fidelity(const Covariance& v) {
  Eigen::Matrix<double, 2, 4> m;
  m << 1, 0, -1, 0, 0, 1, 0, 1;
  const Eigen::Matrix2d sigma = m * v * m.transpose();
  return 2.0 / std::sqrt((2.0 * Eigen::Matrix2d::Identity() + sigma).determinant());
}

namespace {
// h(x) = (x + 1) log2(x + 1) - x log2 x, with h(0) = 0.
double entropy_h(double x) {
  if (x <= 0.0) return 0.0;
  return (x + 1.0) * std::log2(x + 1.0) - x * std::log2(x);
}
bool entanglement_breaking(const link::Channel& ch) {
  const double tau = ch.transmissivity;
  return tau <= 0.0 || ch.bath_photons * (1.0 - tau) >= tau;
}
}  // namespace

double plob_bound(const link::Channel& ch) {
  const double tau = ch.transmissivity, n = ch.bath_photons;
  if (tau >= 1.0) return INFINITY;
  if (entanglement_breaking(ch)) return 0.0;
  // -log2[(1 - tau) tau^n] - h(n), written with log1p for tau close to 1.
  const double value = -std::log2(1.0 - tau) - n * std::log2(tau) - entropy_h(n);
  return std::max(0.0, value);
}

double rci_bound(const link::Channel& ch) {
  const double tau = ch.transmissivity, n = ch.bath_photons;
  if (tau >= 1.0) return INFINITY;
  if (entanglement_breaking(ch)) return 0.0;
  return std::max(0.0, -std::log2(1.0 - tau) - entropy_h(n));
}

StandardForm swap(const StandardForm& p1, const StandardForm& p2) {
  const double s = p1.b + p2.b;
  return {p1.a - p1.c * p1.c / s, p2.a - p2.c * p2.c / s, p1.c * p2.c / s};
}

StandardForm swap_feed_forward(const StandardForm& first, const StandardForm& second, double gain,
                               double bell_efficiency) {
  // x_{a2} -> x_{a2} - g x_{b2} + g x_{b1} + g noise (p with signs that keep the standard form):
  // Var = a2 + g^2 (b1 + b2) - 2 g c2 + g^2 2 (1 - eta)/eta, Cov(x_{a1}, x_{a2}) = g c1.
  const double g = gain;
  return {first.a,
          second.a + g * g * (first.b + second.b) - 2.0 * g * second.c + g * g * 2.0 * (1.0 - bell_efficiency) / bell_efficiency,
          g * first.c};
}

StandardForm swap_unit_gain(const StandardForm& first, const StandardForm& second, double bell_efficiency) {
  // x_{a2} = x_{b1} + (x_{a2} - x_{b2}) + noise, p likewise with p_{a2} + p_{b2}: the teleported
  // mode keeps its correlations with a1 and gains the resource's EPR variance a2 + b2 - 2 c2 and
  // the rescaled homodyne noise 2 (1 - eta) / eta.
  const double noise = second.a + second.b - 2.0 * second.c + 2.0 * (1.0 - bell_efficiency) / bell_efficiency;
  return {first.a, first.b + noise, first.c};
}

}  // namespace heraldry::gaussian
