// Internals shared by the Fock engine and the measures. Not part of the public API.
#pragma once

#include <cmath>
#include <vector>

#include "heraldry/fock.hpp"

namespace heraldry::fock::detail {

/// Photon distribution of one mode into p (resized to N + 1; no allocation when it already is).
void photon_distribution(const SectorState& s, Mode mode, Eigen::VectorXd& p);
void photon_distribution(const DenseState& s, Mode mode, Eigen::VectorXd& p);

/// out(m, n) = <m| D(alpha) |n> for real alpha (the normalised Laguerre recurrence; see
/// heraldry::measures::displacement_elements). std::invalid_argument (prefixed by `where`) for a
/// non-square output or a non-finite alpha.
void displacement_elements(double alpha, Eigen::Ref<Eigen::MatrixXd> out, const char* where);
/// Gauss-Laguerre nodes and weights w_i e^{x_i} (see heraldry::measures::gauss_laguerre).
void gauss_laguerre(int n, std::vector<double>& nodes, std::vector<double>& scaled_weights, const char* where);

/// ln k! for k = 0..n (std::lgamma, accurate to a few ulp of the result).
inline std::vector<double> log_factorials(int n) {
  std::vector<double> lf(static_cast<std::size_t>(n + 1));
  for (int k = 0; k <= n; ++k) lf[static_cast<std::size_t>(k)] = std::lgamma(k + 1.0);
  return lf;
}

/// e * ln(x) with the convention 0^0 = 1 (e = 0 gives 0 even for x = 0) and ln 0 = -inf.
inline double power_log(int e, double x) {
  if (e == 0) return 0.0;
  return x > 0.0 ? e * std::log(x) : -INFINITY;
}

/// n_a of the last row of block d = n_a - n_b at cutoff n: min(n, n + d).
inline int highest(int d, int n) { return d < 0 ? n + d : n; }

}  // namespace heraldry::fock::detail
