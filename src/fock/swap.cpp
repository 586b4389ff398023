// Unit-gain entanglement swapping as a random-displacement channel on one mode (heraldry/swap.hpp,
// docs/relay.md).
//
// With beta = r e^{i theta} and a radial weight P(r), the channel
//   Phi(sigma) = int d^2beta P(beta) D(beta) sigma D(beta)^dag
// maps |m><n| into the span of |m'><n'| with m' - n' = m - n = k (the angular integral), with
//   T^(k)_{m'm} = 2 pi int_0^inf r dr P(r) D_{m'm}(r) D_{n'n}(r),   n = m - k, n' = m' - k,
// D_{m'm}(r) = <m'|D(r)|m> real. The weight is (1/pi) times
//   Q(r) = <<r| rho_2 |r>> = sum_d v_d^T B_d v_d,   v_d[i] = D_{k_i, k_i - d}(r),
// B_d the block d of the resource (row i: a2 holds k_i photons, b2 k_i - d). Q, the products
// D D, and so the integrand are e^{-2u} times polynomials in u = r^2 of degree at most
// 2 N_2 + (m + m' + n + n') / 2, so with v = 2u the Gauss-Laguerre rule of enough nodes is
// exact: T = (1/2) sum_i w_i e^{v_i} Q(r_i) D D (r_i), r_i = sqrt(v_i / 2).
#include "heraldry/swap.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>
#include <vector>

#include "fock/detail.hpp"

namespace heraldry::fock {

namespace {

constexpr const char* where = "heraldry::fock::swap";

// The amplifier adds photons: the state is first embedded at a cutoff half as high again, and what
// it still sends above is in the ledger.
SectorState noisy_resource(const SectorState& second, double eta) {
  if (eta == 1.0) return second;
  const int n = second.cutoff(), big = n + n / 2 + 6;
  SectorState res(big);
  for (int d = -n; d <= n; ++d) {
    const auto& b = second.block(d);
    res.block(d).topLeftCorner(b.rows(), b.cols()) = b;
  }
  res.add_truncation_loss(second.truncation_loss());
  {
    apply(res, Mode::A, pure_loss(eta, res.cutoff()));
    apply(res, Mode::A, amplifier(1.0 / eta, res.cutoff()));
  }
  return res;
}

struct Rule {
  std::vector<double> r, q;  // radius, 0.5 w_i e^{v_i} Q(r_i)
  Eigen::MatrixXd number;    // T^(0)_{m'm} = P(m' photons out | m in), m' = 0..top, m = 0..n1
};

// The quadrature nodes (exact up to output photon number `top`) with the weight at each, and
// the photon-number transfer matrix from the same displacement elements. The weights
// Q(r_i) = sum_d v_d(r_i)^T B_d v_d(r_i) are taken for all nodes at once (one matrix product
// per block).
Rule make_rule(const SectorState& res, int n1, int top) {
  const int n2 = res.cutoff();
  const int nodes = (2 * n2 + n1 + top + 1) / 2 + 2;
  std::vector<double> x, w;
  detail::gauss_laguerre(nodes, x, w, where);
  Rule rule;
  rule.number = Eigen::MatrixXd::Zero(top + 1, n1 + 1);
  const int dim = std::max(n2, top) + 1;
  Eigen::MatrixXd dm(dim, dim);
  int used = 0;
  while (used < nodes && std::exp(-0.5 * x[static_cast<std::size_t>(used)]) > 0.0 &&
         w[static_cast<std::size_t>(used)] > 0.0)
    ++used;
  std::vector<Eigen::MatrixXd> v(static_cast<std::size_t>(2 * n2 + 1));
  for (int d = -n2; d <= n2; ++d) v[static_cast<std::size_t>(d + n2)].resize(res.block(d).rows(), used);
  std::vector<Eigen::MatrixXd> squares;
  for (int i = 0; i < used; ++i) {
    const double r = std::sqrt(0.5 * x[static_cast<std::size_t>(i)]);
    detail::displacement_elements(r, dm, where);
    rule.r.push_back(r);
    for (int d = -n2; d <= n2; ++d) {
      Eigen::MatrixXd& vd = v[static_cast<std::size_t>(d + n2)];
      const int lo = SectorState::first_photon(d);
      for (int k = 0; k < vd.rows(); ++k) vd(k, i) = dm(lo + k, lo + k - d);
    }
    squares.push_back(dm.topLeftCorner(top + 1, n1 + 1).array().square().matrix());
  }
  Eigen::VectorXd q = Eigen::VectorXd::Zero(used);
  for (int d = -n2; d <= n2; ++d) {
    const Eigen::MatrixXd& vd = v[static_cast<std::size_t>(d + n2)];
    q += (vd.array() * (res.block(d) * vd).array()).colwise().sum().matrix().transpose();
  }
  for (int i = 0; i < used; ++i) {
    // A quadratic form of a positive block: >= 0 up to round-off.
    const double qi = 0.5 * w[static_cast<std::size_t>(i)] * std::max(0.0, q(i));
    rule.q.push_back(qi);
    rule.number += qi * squares[static_cast<std::size_t>(i)];
  }
  return rule;
}

void check_efficiency(double eta) {
  if (!(eta > 0.0 && eta <= 1.0))
    throw std::invalid_argument(std::string(where) + ": bell efficiency " + std::to_string(eta) +
                                " outside (0, 1]");
}

}  // namespace

Eigen::VectorXd swap_output_distribution(const SectorState& first, const SectorState& second,
                                         double bell_efficiency, int limit) {
  check_efficiency(bell_efficiency);
  const SectorState res = noisy_resource(second, bell_efficiency);
  const int n1 = first.cutoff();
  const Rule rule = make_rule(res, n1, limit);
  Eigen::VectorXd p1;
  detail::photon_distribution(first, Mode::B, p1);
  return rule.number * p1;
}

SectorState swap(const SectorState& first, const SectorState& second, const SwapOptions& options) {
  check_efficiency(options.bell_efficiency);
  const int n1 = first.cutoff();
  if (options.output_cutoff != 0 && options.output_cutoff < n1)
    throw std::invalid_argument(std::string(where) + ": output cutoff " + std::to_string(options.output_cutoff) +
                                " below the input cutoff " + std::to_string(n1));
  const SectorState res = noisy_resource(second, options.bell_efficiency);
  const int n2 = res.cutoff();
  Eigen::VectorXd p1;
  detail::photon_distribution(first, Mode::B, p1);

  // The output photon distribution of a2 up to `top`, for the cutoff and the dropped weight.
  int top = options.output_cutoff > 0 ? 2 * options.output_cutoff + 20 : n1 + n2 + 20;
  Rule rule;
  Eigen::MatrixXd t0;
  Eigen::VectorXd tail;  // tail(N) = weight in photon numbers N+1..top
  int nout = options.output_cutoff;
  for (;;) {
    rule = make_rule(res, n1, top);
    t0 = rule.number;
    const Eigen::VectorXd p = t0 * p1;
    tail.setZero(top + 1);
    for (int n = top - 1; n >= 0; --n) tail(n) = tail(n + 1) + p(n + 1);
    if (nout > 0) break;
    // Dropping less than the inputs' own truncation leaves uncertain buys nothing: the
    // truncated resource's top components (weight ~ its ledger) displace b1 far up, a tail
    // that the untruncated resource's coherences would cancel.
    const double inherited = first.truncation_loss() * res.trace() + first.trace() * res.truncation_loss();
    const double allowed = std::max(options.max_dropped, inherited);
    int n = n1;
    while (n < top && tail(n) > allowed) ++n;
    // The tail beyond `top` is not seen: keep a margin of half the cutoff above the choice.
    if (n + n / 2 + 10 <= top || top >= 2 * options.max_output_cutoff + 20) {
      nout = std::min(n, std::max(n1, options.max_output_cutoff));
      break;
    }
    top = 2 * top;
  }

  // T^(k), k = m - n in [0, n1]: rows m' = 0..nout, columns m = 0..n1 (zero where n or n'
  // fall outside). k < 0 is not needed: the output is symmetric, and its elements of
  // coherence order -k are the mirror images of those of order k.
  const int rows = nout + 1, cols = n1 + 1;
  std::vector<Eigen::MatrixXd> tk(static_cast<std::size_t>(n1 + 1), Eigen::MatrixXd::Zero(rows, cols));
  Eigen::MatrixXd dm(rows, rows);
  for (std::size_t i = 0; i < rule.r.size(); ++i) {
    detail::displacement_elements(rule.r[i], dm, where);
    const double q = rule.q[i];
    for (int k = 0; k <= n1; ++k) {
      const int r = rows - k, c = cols - k;
      tk[static_cast<std::size_t>(k)].block(k, k, r, c) += q * dm.block(k, k, r, c).cwiseProduct(dm.block(0, 0, r, c));
    }
  }

  // rho'_{(i,m'),(j,n')} = sum_m T^(k)_{m'm} rho_{(i,m),(j,m-k)}, k = i - j >= 0: for each k one
  // product of T^(k) with the columns x_(i) (i = k..n1), then the element and its mirror.
  SectorState out(nout);
  Eigen::MatrixXd x, y;
  for (int k = 0; k <= n1; ++k) {
    const int count = n1 + 1 - k;
    x.setZero(cols, count);
    for (int c = 0; c < count; ++c) {
      const int i = k + c, j = c;
      for (int m = k; m <= n1; ++m) {
        const int d = i - m, lo = SectorState::first_photon(d);
        x(m, c) = first.block(d)(i - lo, j - lo);
      }
    }
    y.noalias() = tk[static_cast<std::size_t>(k)] * x;
    for (int c = 0; c < count; ++c) {
      const int i = k + c, j = c;
      for (int mp = k; mp <= nout; ++mp) {
        const int d = i - mp, lo = SectorState::first_photon(d);
        Eigen::MatrixXd& blk = out.block(d);
        blk(i - lo, j - lo) = y(mp, c);
        blk(j - lo, i - lo) = y(mp, c);
      }
    }
  }

  double dropped = 0.0;
  if (nout < top) {
    for (int m = 0; m <= n1; ++m) dropped += p1(m) * t0.col(m).tail(top - nout).sum();
  }
  const double t1 = first.trace(), l1 = first.truncation_loss();
  const double t2 = res.trace(), l2 = res.truncation_loss();
  out.add_truncation_loss(l1 * t2 + t1 * l2 + l1 * l2 + dropped);
  return out;
}

}  // namespace heraldry::fock
