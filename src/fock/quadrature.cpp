// Building blocks shared by the swap channel (src/fock/swap.cpp) and the radial fidelity
// (src/measures/fidelity.cpp): displacement matrix elements for a real amplitude and the
// Gauss-Laguerre rule. Public faces: heraldry::measures::displacement_elements, gauss_laguerre.
#include <cmath>
#include <stdexcept>
#include <string>
#include <vector>

#include <Eigen/Eigenvalues>

#include "fock/detail.hpp"

namespace heraldry::fock::detail {

void displacement_elements(double alpha, Eigen::Ref<Eigen::MatrixXd> out, const char* where) {
  const int dim = static_cast<int>(out.rows());
  if (out.cols() != dim) throw std::invalid_argument(std::string(where) + ": the output must be square");
  if (!std::isfinite(alpha)) throw std::invalid_argument(std::string(where) + ": alpha must be finite");
  const double u = alpha * alpha;
  const double log_abs = alpha != 0.0 ? std::log(std::abs(alpha)) : -INFINITY;
  // Along each diagonal k = m - n >= 0: f_n = <n+k| D |n> = sqrt(n!/(n+k)!) alpha^k e^{-u/2} L_n^(k)(u).
  // The three-term recurrence of L_n^(k) in n, rescaled by that prefactor, reads
  // f_{n+1} = [(2n+1+k-u) f_n - sqrt(n(n+k)) f_{n-1}] / sqrt((n+1)(n+k+1)), |f_n| <= 1.
  // (The recurrence in m from row 0 quoted with a D = D (a + alpha) is exact but loses all
  // accuracy above the diagonal through cancellation; this one does not.)
  // Above the diagonal, for real alpha: <n| D |n+k> = (-1)^k <n+k| D |n>.
  // sqrt(n) and 1/sqrt(n) tables: two multiplications per element instead of two roots.
  thread_local std::vector<double> root, inverse_root;
  if (static_cast<int>(root.size()) < 2 * dim + 2) {
    root.resize(static_cast<std::size_t>(2 * dim + 2));
    inverse_root.resize(root.size());
    for (std::size_t i = 0; i < root.size(); ++i) {
      root[i] = std::sqrt(static_cast<double>(i));
      inverse_root[i] = i > 0 ? 1.0 / root[i] : 0.0;
    }
  }
  for (int k = 0; k < dim; ++k) {
    const double sign = (k % 2 == 0) ? 1.0 : -1.0;
    const double sign_alpha = (alpha < 0.0 && k % 2 == 1) ? -1.0 : 1.0;
    double prev = 0.0;
    double cur = sign_alpha * std::exp((k == 0 ? 0.0 : k * log_abs) - 0.5 * u - 0.5 * std::lgamma(k + 1.0));
    for (int n = 0; n + k < dim; ++n) {
      out(n + k, n) = cur;
      out(n, n + k) = sign * cur;
      const double next = ((2.0 * n + 1.0 + k - u) * cur - root[static_cast<std::size_t>(n)] *
                                                               root[static_cast<std::size_t>(n + k)] * prev) *
                          (inverse_root[static_cast<std::size_t>(n + 1)] * inverse_root[static_cast<std::size_t>(n + k + 1)]);
      prev = cur;
      cur = next;
    }
  }
}

namespace {
// e^{-x/2} L_k(x) for k = n - 1 and n (the scaled three-term recurrence; |e^{-x/2} L_k(x)| <= 1
// for x >= 0, so nothing overflows).
void scaled_laguerre(int n, double x, double& l_nm1, double& l_n) {
  double prev = 0.0, cur = std::exp(-0.5 * x);  // k = -1 (unused), k = 0
  for (int k = 0; k < n; ++k) {
    const double next = ((2.0 * k + 1.0 - x) * cur - k * prev) / (k + 1.0);
    prev = cur;
    cur = next;
  }
  l_nm1 = prev;
  l_n = cur;
}
}  // namespace

void gauss_laguerre(int n, std::vector<double>& nodes, std::vector<double>& scaled_weights, const char* where) {
  if (n < 1) throw std::invalid_argument(std::string(where) + ": need at least one node");
  // Jacobi matrix of the Laguerre polynomials: diagonal 2k + 1, off-diagonal k (Golub-Welsch).
  Eigen::VectorXd diag(n), sub(std::max(0, n - 1));
  for (int k = 0; k < n; ++k) diag(k) = 2.0 * k + 1.0;
  for (int k = 1; k < n; ++k) sub(k - 1) = k;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver;
  solver.computeFromTridiagonal(diag, sub, Eigen::EigenvaluesOnly);
  nodes.resize(static_cast<std::size_t>(n));
  scaled_weights.resize(static_cast<std::size_t>(n));
  for (int i = 0; i < n; ++i) {
    double x = solver.eigenvalues()(i), lm1, ln;
    // Newton on L_n, with x L_n'(x) = n [L_n(x) - L_{n-1}(x)]; the scaling e^{-x/2} cancels.
    for (int it = 0; it < 3; ++it) {
      scaled_laguerre(n, x, lm1, ln);
      const double step = x * ln / (n * (ln - lm1));
      if (!std::isfinite(step)) break;
      x -= step;
    }
    scaled_laguerre(n, x, lm1, ln);
    // w = 1 / (x L_n'(x)^2) = x / (n^2 L_{n-1}(x)^2) at a zero of L_n; times e^x.
    const double dl = n * (ln - lm1);  // x L_n'(x) e^{-x/2}
    nodes[static_cast<std::size_t>(i)] = x;
    // Beyond x ~ 1400 (rules of more than ~350 nodes) e^{-x/2} underflows: those nodes carry
    // true weights below e^{-1400} and get 0.
    const double w = x / (dl * dl);
    scaled_weights[static_cast<std::size_t>(i)] = std::isfinite(w) ? w : 0.0;
  }
}

}  // namespace heraldry::fock::detail
