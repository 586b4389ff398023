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
#include <limits>
#include <stdexcept>
#include <string>
#include <vector>

#include "fock/detail.hpp"

namespace heraldry::fock {

namespace {

constexpr const char* where = "heraldry::fock::swap";

// The amplifier adds photons: the state is first embedded at a cutoff half as high again, and what
// it still sends above is in the ledger.
SectorState padded(const SectorState& s) {
  const int n = s.cutoff(), big = n + n / 2 + 6;
  SectorState out(big);
  for (int d = -n; d <= n; ++d) {
    const auto& b = s.block(d);
    out.block(d).topLeftCorner(b.rows(), b.cols()) = b;
  }
  out.add_truncation_loss(s.truncation_loss());
  return out;
}

// The noise goes on a2 (unit gain, where either mode would do) or on b2 (any gain: the noise
// enters through the measured b2 quadratures, scaled by the gain like b2 itself).
SectorState noisy_resource(const SectorState& second, double eta, Mode mode) {
  if (eta == 1.0) return second;
  SectorState res = padded(second);
  apply(res, mode, pure_loss(eta, res.cutoff()));
  apply(res, mode, amplifier(1.0 / eta, res.cutoff()));
  return res;
}

struct Rule {
  std::vector<double> r, q;  // radius, 0.5 w_i e^{v_i} Q(r_i) (or the gain route's weight)
  Eigen::MatrixXd number;    // T^(0)_{m'm} = P(m' photons out | m in), m' = 0..top, m = 0..n1
  bool gain_route = false;   // T from <m|D|m-k> <m'|D|m'-k> (see make_gain_rule)
  double noise = 0.0;        // gain route: the absolute round-off of one element of T
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
    poll_cancel();
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

// Gain g != 1. chi_out(xi_1, xi) = chi_1(xi_1, g xi) w(xi), w(xi) = chi_2(a2: xi, b2: g xi*).
// Pure loss g^2 (g < 1) or the amplifier g^2 (g > 1) on b1 gives chi_1(xi_1, g xi)
// e^{-|1 - g^2| u / 2}, u = |xi|^2; what remains is the multiplication of the characteristic
// function by w~(u) = w(u) e^{|1 - g^2| u / 2}, whose matrix elements (chi_sigma -> chi_sigma w~,
// sigma = (1/pi) int d^2xi chi_sigma(xi) D(-xi), the angular integral done) are
//   T^(k)_{m'm} = int_0^inf du w~(u) <m|D(r)|m-k> <m'|D(r)|m'-k>,   r = sqrt u.
// w is radial for U(1)-symmetric resources: w(u) = sum rho_2 <k'|D(r)|k> <n'|D(g r)|n> (a2 rows,
// b2 columns), e^{-(1 + g^2) u / 2} times a polynomial of degree <= 2 N_2, so the integrand is
// e^{-(1 + min(1, g^2)) u} times a polynomial and the Gauss-Laguerre rule in
// v = (1 + min(1, g^2)) u is exact. The weight w~ is not a probability density (the noise
// operator a2 - g b2^dag is not normal): the channel is positive only as a whole.
Rule make_gain_rule(const SectorState& res, int n1, int top, double g) {
  const int n2 = res.cutoff();
  const int nodes = (2 * n2 + n1 + top + 1) / 2 + 2;
  const double scale = 1.0 + std::min(1.0, g * g), excess = 0.5 * std::abs(1.0 - g * g);
  std::vector<double> x, w;
  detail::gauss_laguerre(nodes, x, w, where);
  Rule rule;
  rule.gain_route = true;
  rule.number = Eigen::MatrixXd::Zero(top + 1, n1 + 1);
  const int dim = std::max(n2, top) + 1;
  Eigen::MatrixXd dm(dim, dim), dg(n2 + 1, n2 + 1);
  for (int i = 0; i < nodes; ++i) {
    const double v = x[static_cast<std::size_t>(i)];
    if (std::exp(-0.5 * v) == 0.0 || w[static_cast<std::size_t>(i)] == 0.0) break;
    const double u = v / scale, r = std::sqrt(u);
    detail::displacement_elements(r, dm, where);
    detail::displacement_elements(g * r, dg, where);
    // chi_2(a2: r, b2: g r) = sum_{(k,n),(k',n')} rho_2 <k'|D(r)|k> <n'|D(g r)|n> over the blocks.
    double chi = 0.0;
    for (int d = -n2; d <= n2; ++d) {
      const auto& b = res.block(d);
      const int lo = SectorState::first_photon(d), size = static_cast<int>(b.rows());
      chi += (b.array() * dm.block(lo, lo, size, size).transpose().array() *
              dg.block(lo - d, lo - d, size, size).transpose().array())
                 .sum();
    }
    const double q = w[static_cast<std::size_t>(i)] / scale * chi * std::exp(excess * u);
    rule.r.push_back(r);
    rule.q.push_back(q);
    rule.number += q * dm.diagonal().head(top + 1) * dm.diagonal().head(n1 + 1).transpose();
    rule.noise += std::abs(q);
  }
  // The weights alternate in sign: each element of T is a sum with cancellation, good to about
  // one ulp of sum |q_i| (|<m|D|n>| <= 1; the floor seen on Gaussian pairs).
  rule.noise *= std::numeric_limits<double>::epsilon();
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
  const SectorState res = noisy_resource(second, bell_efficiency, Mode::A);
  const int n1 = first.cutoff();
  const Rule rule = make_rule(res, n1, limit);
  Eigen::VectorXd p1;
  detail::photon_distribution(first, Mode::B, p1);
  return rule.number * p1;
}

SectorState swap(const SectorState& input, const SectorState& second, const SwapOptions& options) {
  check_efficiency(options.bell_efficiency);
  const double g = options.gain;
  if (!(g > 0.0) || !std::isfinite(g))
    throw std::invalid_argument(std::string(where) + ": gain " + std::to_string(g) + " is not a finite number > 0");
  // Gain g != 1: b1 first through pure loss g^2 (g < 1) or the amplifier g^2 (g > 1, at a
  // cutoff half as high again).
  SectorState scaled(0);
  if (g < 1.0) {
    scaled = input;
    apply(scaled, Mode::B, pure_loss(g * g, scaled.cutoff()));
  } else if (g > 1.0) {
    scaled = padded(input);
    apply(scaled, Mode::B, amplifier(g * g, scaled.cutoff()));
  }
  const SectorState& first = g == 1.0 ? input : scaled;
  const int n1 = first.cutoff();
  if (options.output_cutoff != 0 && options.output_cutoff < n1)
    throw std::invalid_argument(std::string(where) + ": output cutoff " + std::to_string(options.output_cutoff) +
                                " below the input cutoff " + std::to_string(n1));
  const SectorState res = noisy_resource(second, options.bell_efficiency, g == 1.0 ? Mode::A : Mode::B);
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
    rule = g == 1.0 ? make_rule(res, n1, top) : make_gain_rule(res, n1, top, g);
    t0 = rule.number;
    // (The gain route's T^(0) carries round-off of either sign, ~1e-16 of its scale.)
    const Eigen::VectorXd p = (t0 * p1).cwiseMax(0.0);
    tail.setZero(top + 1);
    for (int n = top - 1; n >= 0; --n) tail(n) = tail(n + 1) + p(n + 1);
    if (nout > 0) break;
    // Dropping less than the inputs' own truncation leaves uncertain buys nothing: the
    // truncated resource's top components (weight ~ its ledger) displace b1 far up, a tail
    // that the untruncated resource's coherences would cancel.
    const double inherited = first.truncation_loss() * res.trace() + first.trace() * res.truncation_loss();
    // The gain route cannot resolve a tail below its round-off (per photon number, rule.noise).
    const double allowed = std::max({options.max_dropped, inherited, rule.noise * (top + 1)});
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
      if (rule.gain_route)
        tk[static_cast<std::size_t>(k)].block(k, k, r, c).noalias() +=
            (q * dm.diagonal(-k).head(r)) * dm.diagonal(-k).head(c).transpose();
      else
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
    dropped = std::max(0.0, dropped);
  }
  const double t1 = first.trace(), l1 = first.truncation_loss();
  const double t2 = res.trace(), l2 = res.truncation_loss();
  // The gain route's round-off on the kept diagonal is part of what the trace is uncertain by.
  const double roundoff = rule.gain_route ? rule.noise * (nout + 1) : 0.0;  // weighted by p1, sum 1
  out.add_truncation_loss(l1 * t2 + t1 * l2 + l1 * l2 + dropped + roundoff);
  return out;
}

}  // namespace heraldry::fock
