// Braunstein-Kimble unit-gain fidelity: the EPR-operator trace (docs/physics.md §7.2) and the radial
// Gauss-Laguerre quadrature of the characteristic function (§7.3), held against each other.
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "fock/detail.hpp"
#include "measures/workspace.hpp"

namespace heraldry::measures {

// ---------------------------------------------------------------- EPR operator

namespace {

// <m, n| O |m', n'> with m - n = m' - n' (caller's duty):
// 2^{-(m'+n+1)} sqrt(m! n! m'! n'!) sum_{p = max(0, m-n)}^{min(m, m')} 1/[(m-p)! (m'-p)! p! (n-m+p)!].
// The powers of 2 of docs/physics.md §7.2, 2^{-(j+k+p+q+1)}, add up to 2^{-(m'+n+1)} for every p.
// Positive terms: the first in log space, the rest by their ratio
// (m-p)(m'-p) / [(p+1)(n-m+p+1)], rescaled, so one exp per element.
double epr_element(const std::vector<double>& lf, int m, int n, int mp, int np) {
  const int plo = std::max(0, m - n), phi = std::min(m, mp);
  if (plo > phi) return 0.0;
  double log_scale = -(mp + n + 1) * std::log(2.0) + 0.5 * (lf[m] + lf[n] + lf[mp] + lf[np]) - lf[m - plo] -
                     lf[mp - plo] - lf[plo] - lf[n - m + plo];
  double term = 1.0, sum = 1.0;
  constexpr double big = 1e250;
  for (int p = plo; p < phi; ++p) {
    term *= (static_cast<double>(m - p) * (mp - p)) / ((p + 1.0) * (n - m + p + 1.0));
    sum += term;
    if (sum > big) {
      term /= big;
      sum /= big;
      log_scale += std::log(big);
    }
  }
  return std::exp(log_scale + std::log(sum));
}

}  // namespace

double epr_operator_element(int m, int n, int mp, int np) {
  if (m < 0 || n < 0 || mp < 0 || np < 0)
    throw std::invalid_argument("heraldry::measures::epr_operator_element: negative photon number");
  if (m - n != mp - np) return 0.0;
  const auto lf = fock::detail::log_factorials(std::max({m, n, mp, np}));
  return epr_element(lf, m, n, mp, np);
}

void Workspace::Impl::size_epr(int cutoff) {
  if (epr_cutoff == cutoff) return;
  const auto lf = fock::detail::log_factorials(cutoff);
  epr_blocks.assign(static_cast<std::size_t>(2 * cutoff + 1), Eigen::MatrixXd());
  for (int d = -cutoff; d <= cutoff; ++d) {
    poll_cancel();
    const int lo = fock::SectorState::first_photon(d);
    const int size = cutoff + 1 - std::abs(d);
    Eigen::MatrixXd& o = epr_blocks[static_cast<std::size_t>(d + cutoff)];
    o.resize(size, size);
    for (int i = 0; i < size; ++i)
      for (int j = i; j < size; ++j) {
        const int m = lo + i, mp = lo + j;
        o(i, j) = o(j, i) = epr_element(lf, m, m - d, mp, mp - d);  // O is symmetric
      }
  }
  epr_cutoff = cutoff;
}

double fidelity_epr(const fock::SectorState& state, Workspace& work) {
  const double trace = detail::checked_trace(state.trace(), "fidelity_epr");
  const int cutoff = state.cutoff();
  auto& w = work.impl();
  w.size_epr(cutoff);
  // Tr[rho O] = sum over the d-blocks of sum_ij rho_ij O_ji, O symmetric.
  double f = 0.0;
  for (int d = -cutoff; d <= cutoff; ++d)
    f += state.block(d).cwiseProduct(w.epr_blocks[static_cast<std::size_t>(d + cutoff)]).sum();
  return f / trace;
}

double fidelity_epr(const fock::DenseState& state, Workspace& work) {
  const double trace = detail::checked_trace(state.trace(), "fidelity_epr");
  const int cutoff = state.cutoff();
  auto& w = work.impl();
  w.size_epr(cutoff);
  // O vanishes outside the U(1) pattern, so only pattern elements of rho contribute.
  const Eigen::MatrixXd& rho = state.matrix();
  double f = 0.0;
  for (int m = 0; m <= cutoff; ++m)
    for (int n = 0; n <= cutoff; ++n)
      for (int mp = 0; mp <= cutoff; ++mp) {
        const int np = mp - m + n;
        if (np < 0 || np > cutoff) continue;
        const int d = m - n, lo = fock::SectorState::first_photon(d);
        f += rho(state.index(m, n), state.index(mp, np)) *
             w.epr_blocks[static_cast<std::size_t>(d + cutoff)](m - lo, mp - lo);
      }
  return f / trace;
}

// ---------------------------------------------------------------- displacement elements

void displacement_elements(double alpha, Eigen::Ref<Eigen::MatrixXd> out) {
  const int dim = static_cast<int>(out.rows());
  if (out.cols() != dim)
    throw std::invalid_argument("heraldry::measures::displacement_elements: the output must be square");
  if (!std::isfinite(alpha))
    throw std::invalid_argument("heraldry::measures::displacement_elements: alpha must be finite");
  const double u = alpha * alpha;
  const double log_abs = alpha != 0.0 ? std::log(std::abs(alpha)) : -INFINITY;
  // Along each diagonal k = m - n >= 0: f_n = <n+k| D |n> = sqrt(n!/(n+k)!) alpha^k e^{-u/2} L_n^(k)(u).
  // The three-term recurrence of L_n^(k) in n, rescaled by that prefactor, reads
  // f_{n+1} = [(2n+1+k-u) f_n - sqrt(n(n+k)) f_{n-1}] / sqrt((n+1)(n+k+1)), |f_n| <= 1.
  // (The recurrence in m from row 0 quoted with a D = D (a + alpha) is exact but loses all
  // accuracy above the diagonal through cancellation; this one does not.)
  // Above the diagonal, for real alpha: <n| D |n+k> = (-1)^k <n+k| D |n>.
  for (int k = 0; k < dim; ++k) {
    const double sign = (k % 2 == 0) ? 1.0 : -1.0;
    const double sign_alpha = (alpha < 0.0 && k % 2 == 1) ? -1.0 : 1.0;
    double prev = 0.0;
    double cur = sign_alpha * std::exp((k == 0 ? 0.0 : k * log_abs) - 0.5 * u - 0.5 * std::lgamma(k + 1.0));
    for (int n = 0; n + k < dim; ++n) {
      out(n + k, n) = cur;
      out(n, n + k) = sign * cur;
      const double next = ((2.0 * n + 1.0 + k - u) * cur - std::sqrt(double(n) * (n + k)) * prev) /
                          std::sqrt((n + 1.0) * (n + k + 1.0));
      prev = cur;
      cur = next;
    }
  }
}

// ---------------------------------------------------------------- Gauss-Laguerre rule

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

LaguerreRule gauss_laguerre(int n) {
  if (n < 1) throw std::invalid_argument("heraldry::measures::gauss_laguerre: need at least one node");
  // Jacobi matrix of the Laguerre polynomials: diagonal 2k + 1, off-diagonal k (Golub-Welsch).
  Eigen::VectorXd diag(n), sub(std::max(0, n - 1));
  for (int k = 0; k < n; ++k) diag(k) = 2.0 * k + 1.0;
  for (int k = 1; k < n; ++k) sub(k - 1) = k;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver;
  solver.computeFromTridiagonal(diag, sub, Eigen::EigenvaluesOnly);
  LaguerreRule rule;
  rule.nodes.resize(static_cast<std::size_t>(n));
  rule.scaled_weights.resize(static_cast<std::size_t>(n));
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
    rule.nodes[static_cast<std::size_t>(i)] = x;
    // Beyond x ~ 1400 (rules of more than ~350 nodes) e^{-x/2} underflows: those nodes carry
    // true weights below e^{-1400} and get 0.
    const double w = x / (dl * dl);
    rule.scaled_weights[static_cast<std::size_t>(i)] = std::isfinite(w) ? w : 0.0;
  }
  return rule;
}

// ---------------------------------------------------------------- radial fidelity

void Workspace::Impl::size_radial(int cutoff) {
  if (radial_cutoff == cutoff) return;
  rule = gauss_laguerre(cutoff + 2);  // exact for chi(u) e^u of degree <= 2N (N + 1 nodes suffice)
  displacement.resize(cutoff + 1, cutoff + 1);
  radial_cutoff = cutoff;
}

namespace {
// chi_AB(xi*, xi) at xi = alpha real (then xi* = xi: the pairing of docs/physics.md §7.1 matters only
// through the U(1) reduction to the radius, which holds for the pairing (xi*, xi)):
// sum rho_{(m,n),(m',n')} <m'|D(alpha)|m> <n'|D(alpha)|n>.
double chi_sector(const fock::SectorState& state, const Eigen::MatrixXd& dm) {
  const int cutoff = state.cutoff();
  double chi = 0.0;
  for (int d = -cutoff; d <= cutoff; ++d) {
    const auto& b = state.block(d);
    const int lo = fock::SectorState::first_photon(d), size = static_cast<int>(b.rows());
    // X_ij = D(m', m) D(n', n), m = lo + i, m' = lo + j, n = m - d, n' = m' - d.
    chi += (b.array() * dm.block(lo, lo, size, size).transpose().array() *
            dm.block(lo - d, lo - d, size, size).transpose().array())
               .sum();
  }
  return chi;
}

double chi_dense(const fock::DenseState& state, const Eigen::MatrixXd& dm) {
  const int dim = state.cutoff() + 1;
  const Eigen::MatrixXd& rho = state.matrix();
  double chi = 0.0;
  for (int m = 0; m < dim; ++m)
    for (int mp = 0; mp < dim; ++mp)
      chi += dm(mp, m) * (rho.block(m * dim, mp * dim, dim, dim).array() * dm.transpose().array()).sum();
  return chi;
}

template <class State, class Chi>
double radial_impl(const State& state, Workspace& work, Chi chi) {
  const double trace = detail::checked_trace(state.trace(), "fidelity_radial");
  auto& w = work.impl();
  w.size_radial(state.cutoff());
  // F = (1/2) sum_i w_i e^{x_i} e^{-x_i/2} chi(x_i/2): the scaled weights keep every factor <= O(1).
  double f = 0.0;
  for (std::size_t i = 0; i < w.rule.nodes.size(); ++i) {
    const double x = w.rule.nodes[i];
    const double damp = std::exp(-0.5 * x);
    if (damp == 0.0) break;  // the remaining nodes carry less than 1e-300
    displacement_elements(std::sqrt(0.5 * x), w.displacement);
    f += 0.5 * w.rule.scaled_weights[i] * damp * chi(state, w.displacement);
  }
  return f / trace;
}
}  // namespace

double fidelity_radial(const fock::SectorState& state, Workspace& work) {
  return radial_impl(state, work, chi_sector);
}
double fidelity_radial(const fock::DenseState& state, Workspace& work) {
  return radial_impl(state, work, chi_dense);
}

// ---------------------------------------------------------------- convenience overloads

double fidelity_epr(const fock::SectorState& state) {
  Workspace work;
  return fidelity_epr(state, work);
}
double fidelity_epr(const fock::DenseState& state) {
  Workspace work;
  return fidelity_epr(state, work);
}
double fidelity_radial(const fock::SectorState& state) {
  Workspace work;
  return fidelity_radial(state, work);
}
double fidelity_radial(const fock::DenseState& state) {
  Workspace work;
  return fidelity_radial(state, work);
}
double fidelity(const fock::SectorState& state, Workspace& work) { return fidelity_epr(state, work); }
double fidelity(const fock::DenseState& state, Workspace& work) { return fidelity_epr(state, work); }
double fidelity(const fock::SectorState& state) { return fidelity_epr(state); }
double fidelity(const fock::DenseState& state) { return fidelity_epr(state); }

}  // namespace heraldry::measures
