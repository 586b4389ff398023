// One-mode Kraus operations on the two state representations: the loss and amplifier Kraus
// operators of docs/physics.md §3.3, the thermal-loss channel built from them, and the kernels that
// apply any list of shift operators while keeping the truncation ledger.
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include <boost/math/special_functions/beta.hpp>

#include "fock/detail.hpp"
#include "heraldry/fock.hpp"

namespace heraldry::fock {

namespace {

void require_cutoff(int cutoff) {
  if (cutoff < 0)
    throw std::invalid_argument("heraldry::fock: cutoff must be >= 0, got " + std::to_string(cutoff));
}

bool is_zero(const std::vector<double>& c) {
  return std::all_of(c.begin(), c.end(), [](double x) { return x == 0.0; });
}

}  // namespace

Operation pure_loss(double tau, int cutoff) {
  require_cutoff(cutoff);
  if (!(tau >= 0.0 && tau <= 1.0))
    throw std::invalid_argument("heraldry::fock::pure_loss: transmissivity must lie in [0, 1], got " +
                                std::to_string(tau));
  const auto lf = detail::log_factorials(cutoff);
  const double log_tau = tau > 0.0 ? std::log(tau) : -INFINITY;
  const double log_loss = tau < 1.0 ? std::log1p(-tau) : -INFINITY;
  auto pow_log = [](int e, double l) { return e == 0 ? 0.0 : e * l; };  // 0^0 = 1
  Operation op;
  for (int k = 0; k <= cutoff; ++k) {
    ShiftOperator a{-k, std::vector<double>(static_cast<std::size_t>(cutoff) + 1, 0.0)};
    // <n-k| A_k |n> = sqrt(C(n,k) tau^{n-k} (1-tau)^k)
    for (int n = k; n <= cutoff; ++n)
      a.coeff[n] = std::exp(0.5 * (lf[n] - lf[k] - lf[n - k] + pow_log(n - k, log_tau) + pow_log(k, log_loss)));
    if (!is_zero(a.coeff)) op.kraus.push_back(std::move(a));
  }
  return op;
}

Operation amplifier(double gain, int cutoff) {
  require_cutoff(cutoff);
  if (!(gain >= 1.0) || !std::isfinite(gain))
    throw std::invalid_argument("heraldry::fock::amplifier: gain must be finite and >= 1, got " +
                                std::to_string(gain));
  const std::size_t size = static_cast<std::size_t>(cutoff) + 1;
  Operation op;
  if (gain == 1.0) {
    op.kraus.push_back({0, std::vector<double>(size, 1.0)});
    return op;
  }
  const auto lf = detail::log_factorials(2 * cutoff);
  const double log_g = std::log(gain);
  const double x = (gain - 1.0) / gain;  // 1 - 1/G
  const double log_x = std::log(x);
  for (int k = 0; k <= cutoff; ++k) {
    ShiftOperator b{k, std::vector<double>(size, 0.0)};
    // <n+k| B_k |n> = sqrt(C(n+k,k) G^{-(n+1)} (1-1/G)^k)
    for (int n = 0; n <= cutoff; ++n)
      b.coeff[n] = std::exp(0.5 * (lf[n + k] - lf[n] - lf[k] - (n + 1) * log_g + k * log_x));
    op.kraus.push_back(std::move(b));
  }
  // All k > N at once: |B_k(n)|^2 is the negative-binomial law of k (n+1 successes of
  // probability 1/G), so sum_{k >= N+1} |B_k(n)|^2 = I_{1-1/G}(N+1, n+1).
  ShiftOperator rest{cutoff + 1, std::vector<double>(size, 0.0)};
  for (int n = 0; n <= cutoff; ++n) rest.coeff[n] = std::sqrt(boost::math::ibeta(cutoff + 1.0, n + 1.0, x));
  op.kraus.push_back(std::move(rest));
  return op;
}

// ---------------------------------------------------------------- kernels

namespace {

// Diagonal weight that `k` sends above the cutoff: sum_{n + shift > N} coeff[n]^2 p_n.
double weight_above(const ShiftOperator& k, const Eigen::VectorXd& p, int cutoff) {
  double lost = 0.0;
  const int size = std::min(static_cast<int>(k.coeff.size()), cutoff + 1);
  for (int n = std::max(0, cutoff + 1 - k.shift); n < size; ++n) lost += k.coeff[n] * k.coeff[n] * p(n);
  return lost;
}

void check_shift(const ShiftOperator& k, int cutoff) {
  const int size = std::min(static_cast<int>(k.coeff.size()), cutoff + 1);
  for (int n = 0; n < size && n + k.shift < 0; ++n)
    if (k.coeff[n] != 0.0)
      throw std::invalid_argument("heraldry::fock::apply: a Kraus operator of shift " + std::to_string(k.shift) +
                                  " has a non-zero coefficient for |" + std::to_string(n) + ">");
}

}  // namespace

void apply(SectorState& state, Mode mode, const Operation& op, Workspace& work) {
  const int cutoff = state.cutoff();
  SectorState& out = work.sector_buffer(cutoff);
  out.set_zero();
  Eigen::VectorXd& p = work.distribution_buffer(cutoff);
  detail::photon_distribution(state, mode, p);
  double lost = 0.0;
  for (const auto& k : op.kraus) {
    poll_cancel();
    check_shift(k, cutoff);
    lost += weight_above(k, p, cutoff);
    const int s = k.shift;
    const int size = static_cast<int>(k.coeff.size());
    for (int d = -cutoff; d <= cutoff; ++d) {
      const int to = mode == Mode::A ? d + s : d - s;  // d = n_a - n_b
      if (to < -cutoff || to > cutoff) continue;
      const int lo = SectorState::first_photon(d), hi = detail::highest(d, cutoff);
      // Range of n_a whose image stays inside 0..N on both modes, and the coefficient index.
      int n0, n1, c0;
      if (mode == Mode::A) {
        n0 = std::max(lo, -s);
        n1 = std::min({hi, cutoff - s, size - 1});
        c0 = n0;  // coefficient of n_a
      } else {
        n0 = std::max(lo, d - s);
        n1 = std::min({hi, cutoff + d - s, d + size - 1});
        c0 = n0 - d;  // coefficient of n_b = n_a - d
      }
      if (n0 > n1) continue;
      const int len = n1 - n0 + 1;
      const int row_out = (mode == Mode::A ? n0 + s : n0) - SectorState::first_photon(to);
      const Eigen::Map<const Eigen::VectorXd> c(k.coeff.data() + c0, len);
      out.block(to).block(row_out, row_out, len, len).noalias() +=
          c.asDiagonal() * state.block(d).block(n0 - lo, n0 - lo, len, len) * c.asDiagonal();
    }
  }
  const double ledger = state.truncation_loss() + lost;
  state.swap(out);
  state.add_truncation_loss(ledger);
}

void apply(DenseState& state, Mode mode, const Operation& op, Workspace& work) {
  const int cutoff = state.cutoff();
  const int dim = cutoff + 1;
  DenseState& out = work.dense_buffer(cutoff);
  out.set_zero();
  Eigen::VectorXd& p = work.distribution_buffer(cutoff);
  detail::photon_distribution(state, mode, p);
  const Eigen::MatrixXd& in = state.matrix();
  Eigen::MatrixXd& o = out.matrix();
  double lost = 0.0;
  for (const auto& k : op.kraus) {
    check_shift(k, cutoff);
    lost += weight_above(k, p, cutoff);
    const int s = k.shift;
    const int size = static_cast<int>(k.coeff.size());
    // Photon numbers of the acted-on mode that stay inside 0..N.
    const int n0 = std::max(0, -s), n1 = std::min({cutoff, cutoff - s, size - 1});
    if (n0 > n1) continue;
    if (mode == Mode::A) {
      // Sub-block (m, m') of size dim x dim holds <m, .| rho |m', .>.
      for (int m = n0; m <= n1; ++m)
        for (int mp = n0; mp <= n1; ++mp)
          o.block((m + s) * dim, (mp + s) * dim, dim, dim) += (k.coeff[m] * k.coeff[mp]) * in.block(m * dim, mp * dim, dim, dim);
    } else {
      const int len = n1 - n0 + 1;
      const Eigen::Map<const Eigen::VectorXd> c(k.coeff.data() + n0, len);
      for (int m = 0; m < dim; ++m)
        for (int mp = 0; mp < dim; ++mp)
          o.block(m * dim + n0 + s, mp * dim + n0 + s, len, len).noalias() +=
              c.asDiagonal() * in.block(m * dim + n0, mp * dim + n0, len, len) * c.asDiagonal();
    }
  }
  const double ledger = state.truncation_loss() + lost;
  state.swap(out);
  state.add_truncation_loss(ledger);
}

void apply(SectorState& state, Mode mode, const Operation& op) {
  Workspace work;
  apply(state, mode, op, work);
}

void apply(DenseState& state, Mode mode, const Operation& op) {
  Workspace work;
  apply(state, mode, op, work);
}

namespace {
template <class State>
void apply_channel_impl(State& state, Mode mode, const link::Channel& ch, Workspace& work) {
  const double tau = ch.transmissivity, n_e = ch.bath_photons;
  if (!(tau >= 0.0 && tau <= 1.0))
    throw std::invalid_argument("heraldry::fock::apply_channel: transmissivity must lie in [0, 1], got " +
                                std::to_string(tau));
  if (!(n_e >= 0.0) || !std::isfinite(n_e))
    throw std::invalid_argument("heraldry::fock::apply_channel: bath photons must be finite and >= 0, got " +
                                std::to_string(n_e));
  // Thermal loss = pure loss (tau / G) THEN amplifier (G), G = 1 + (1 - tau) n_E (docs/physics.md §10 item 5).
  const double gain = 1.0 + (1.0 - tau) * n_e;
  const double eta = tau / gain;
  if (eta < 1.0) apply(state, mode, pure_loss(eta, state.cutoff()), work);
  if (gain > 1.0) apply(state, mode, amplifier(gain, state.cutoff()), work);
}
}  // namespace

void apply_channel(SectorState& state, Mode mode, const link::Channel& ch, Workspace& work) {
  apply_channel_impl(state, mode, ch, work);
}
void apply_channel(DenseState& state, Mode mode, const link::Channel& ch, Workspace& work) {
  apply_channel_impl(state, mode, ch, work);
}
void apply_channel(SectorState& state, Mode mode, const link::Channel& ch) {
  Workspace work;
  apply_channel_impl(state, mode, ch, work);
}
void apply_channel(DenseState& state, Mode mode, const link::Channel& ch) {
  Workspace work;
  apply_channel_impl(state, mode, ch, work);
}

}  // namespace heraldry::fock
