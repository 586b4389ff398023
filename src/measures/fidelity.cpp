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

// The two building blocks live in the Fock engine (fock/detail.hpp), which the swap channel
// shares; these are their public faces.
void displacement_elements(double alpha, Eigen::Ref<Eigen::MatrixXd> out) {
  fock::detail::displacement_elements(alpha, out, "heraldry::measures::displacement_elements");
}

LaguerreRule gauss_laguerre(int n) {
  LaguerreRule rule;
  fock::detail::gauss_laguerre(n, rule.nodes, rule.scaled_weights, "heraldry::measures::gauss_laguerre");
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
