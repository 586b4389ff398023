// Gaussian standard form -> truncated Fock density matrix (docs/physics.md §3.1), the trace deficit of
// that truncation, and the choice of the cutoff (§3.5).
#include <algorithm>
#include <climits>
#include <cmath>
#include <cstdio>
#include <stdexcept>
#include <string>
#include <vector>

#include "fock/detail.hpp"
#include "heraldry/fock.hpp"

namespace heraldry::fock {

namespace {

// The Husimi-function parameters of docs/physics.md §3.1:
// D = (a+1)(b+1) - c^2, s_A = [(a-1)(b+1) - c^2]/D, s_B = [(a+1)(b-1) - c^2]/D, t = 2c/D.
// s_A, s_B >= 0 exactly when the CM is physical; round-off below 0 is clamped to 0.
struct Husimi {
  double log_norm;  // ln(4/D)
  double s_a, s_b, t;
  double log_s_a, log_s_b, log_t;  // -inf for 0
  double log_ratio;                // ln[t^2 / (s_A s_B)] when all three are > 0
  bool all_positive;
};

double safe_log(double x) { return x > 0.0 ? std::log(x) : -INFINITY; }

void validate(const gaussian::StandardForm& f) {
  if (!std::isfinite(f.a) || !std::isfinite(f.b) || !std::isfinite(f.c))
    throw std::invalid_argument("heraldry::fock: Gaussian standard form with a non-finite entry");
  if (f.c < 0.0)
    throw std::invalid_argument("heraldry::fock: standard form needs c >= 0 (docs/physics.md §10 item 2), got c = " +
                                std::to_string(f.c));
  if (!gaussian::is_physical(f))
    throw std::invalid_argument("heraldry::fock: unphysical standard form (a, b, c) = (" + std::to_string(f.a) +
                                ", " + std::to_string(f.b) + ", " + std::to_string(f.c) + ")");
}

Husimi husimi(const gaussian::StandardForm& f) {
  validate(f);
  const double dd = (f.a + 1.0) * (f.b + 1.0) - f.c * f.c;
  Husimi h{};
  h.log_norm = std::log(4.0 / dd);
  h.s_a = std::max(0.0, ((f.a - 1.0) * (f.b + 1.0) - f.c * f.c) / dd);
  h.s_b = std::max(0.0, ((f.a + 1.0) * (f.b - 1.0) - f.c * f.c) / dd);
  h.t = 2.0 * f.c / dd;
  h.log_s_a = safe_log(h.s_a);
  h.log_s_b = safe_log(h.s_b);
  h.log_t = safe_log(h.t);
  h.all_positive = h.s_a > 0.0 && h.s_b > 0.0 && h.t > 0.0;
  h.log_ratio = h.all_positive ? 2.0 * h.log_t - h.log_s_a - h.log_s_b : 0.0;
  // The ratio recurrence below multiplies by t^2/(s_A s_B); far outside [1e-250, 1e250] it would
  // over- or underflow, so those (near-boundary) states take the term-by-term log path.
  if (std::abs(h.log_ratio) > 575.0) h.all_positive = false;
  return h;
}

double pow_log(int e, double log_x) { return e == 0 ? 0.0 : e * log_x; }

// <mA, mB| rho |nA, nB> for mA - mB = nA - nB (docs/physics.md §3.1):
// (4/D) sqrt(mA! mB! nA! nB!) sum_j t^{2j-δ} s_A^{mA-j} s_B^{mB-j} / [j! (j-δ)! (mA-j)! (mB-j)!],
// δ = mA - nA, j = max(0, δ) .. min(mA, mB). Every term is >= 0 and <= the element <= 1.
// All-positive parameters: the first term in log space, the others by the ratio
// term(j+1)/term(j) = [t^2/(s_A s_B)] (mA-j)(mB-j) / [(j+1)(j+1-δ)], with rescaling, so one
// exp and one log per element. Otherwise (a parameter is 0, e.g. a pure state) each term in
// log space; the vanishing ones cost no exponential.
double element(const Husimi& h, const std::vector<double>& lf, const std::vector<double>& inv, int ma, int mb,
               int na, int nb) {
  const int delta = ma - na;
  const int jlo = std::max(0, delta), jhi = std::min(ma, mb);
  if (jlo > jhi) return 0.0;
  const double pre = h.log_norm + 0.5 * (lf[ma] + lf[mb] + lf[na] + lf[nb]);
  auto log_term = [&](int j) {
    return pre + pow_log(2 * j - delta, h.log_t) + pow_log(ma - j, h.log_s_a) + pow_log(mb - j, h.log_s_b) -
           lf[j] - lf[j - delta] - lf[ma - j] - lf[mb - j];
  };
  if (!h.all_positive) {
    double sum = 0.0;
    for (int j = jlo; j <= jhi; ++j) {
      const double l = log_term(j);
      if (l > -INFINITY) sum += std::exp(l);
    }
    return sum;
  }
  constexpr double big = 1e250;
  const double ratio = std::exp(h.log_ratio);
  double log_scale = log_term(jlo), term = 1.0, sum = 1.0;
  for (int j = jlo; j < jhi; ++j) {
    term *= ratio * (static_cast<double>(ma - j) * (mb - j)) * (inv[j + 1] * inv[j + 1 - delta]);
    sum += term;
    if (sum > big) {
      term /= big;
      sum /= big;
      log_scale += std::log(big);
    }
  }
  return std::exp(log_scale + std::log(sum));
}

// Truncated power-series product: out_i = sum_{k <= i} x_k y_{i-k}, i = 0..n-1.
void multiply_series(const std::vector<double>& x, const std::vector<double>& y, std::vector<double>& out) {
  const std::size_t n = x.size();
  out.assign(n, 0.0);
  for (std::size_t i = 0; i < n; ++i) {
    if (x[i] == 0.0) continue;
    for (std::size_t k = 0; i + k < n; ++k) out[i + k] += x[i] * y[k];
  }
}

// 1/k for k = 1..n (index 0 unused).
std::vector<double> reciprocals(int n) {
  std::vector<double> inv(static_cast<std::size_t>(n) + 1, 0.0);
  for (int k = 1; k <= n; ++k) inv[k] = 1.0 / k;
  return inv;
}

void require_cutoff(int cutoff) {
  if (cutoff < 0)
    throw std::invalid_argument("heraldry::fock: cutoff must be >= 0, got " + std::to_string(cutoff));
}

}  // namespace

SectorState sector_state(const gaussian::StandardForm& form, int cutoff) {
  require_cutoff(cutoff);
  const Husimi h = husimi(form);
  const auto lf = detail::log_factorials(cutoff);
  const auto inv = reciprocals(2 * cutoff + 1);
  SectorState s(cutoff);
  for (int d = -cutoff; d <= cutoff; ++d) {
    poll_cancel();
    auto& b = s.block(d);
    const int lo = SectorState::first_photon(d);
    for (int i = 0; i < b.rows(); ++i)
      for (int j = i; j < b.cols(); ++j) {
        const int ma = lo + i, na = lo + j;
        b(i, j) = b(j, i) = element(h, lf, inv, ma, ma - d, na, na - d);
      }
  }
  s.add_truncation_loss(std::max(0.0, 1.0 - s.trace()));
  return s;
}

DenseState dense_state(const gaussian::StandardForm& form, int cutoff) {
  require_cutoff(cutoff);
  const Husimi h = husimi(form);
  const auto lf = detail::log_factorials(cutoff);
  const auto inv = reciprocals(2 * cutoff + 1);
  DenseState s(cutoff);
  for (int ma = 0; ma <= cutoff; ++ma)
    for (int mb = 0; mb <= cutoff; ++mb)
      for (int na = 0; na <= cutoff; ++na) {
        const int nb = na - (ma - mb);  // the U(1) pattern; every other element is 0
        if (nb < 0 || nb > cutoff) continue;
        s.matrix()(s.index(ma, mb), s.index(na, nb)) = element(h, lf, inv, ma, mb, na, nb);
      }
  s.add_truncation_loss(std::max(0.0, 1.0 - s.trace()));
  return s;
}

namespace {
template <class State>
State tmsv_impl(double r, int cutoff) {
  require_cutoff(cutoff);
  if (!(r >= 0.0) || !std::isfinite(r))
    throw std::invalid_argument("heraldry::fock: two-mode squeezing r must be finite and >= 0, got " +
                                std::to_string(r));
  const double l = std::tanh(r);
  const double norm = 1.0 - l * l;
  State s(cutoff);
  for (int n = 0; n <= cutoff; ++n)
    for (int m = 0; m <= cutoff; ++m) s.set(n, n, m, m, norm * std::pow(l, n + m));
  s.add_truncation_loss(std::pow(l, 2.0 * (cutoff + 1)));
  return s;
}
}  // namespace

SectorState sector_tmsv(double r, int cutoff) { return tmsv_impl<SectorState>(r, cutoff); }
DenseState dense_tmsv(double r, int cutoff) { return tmsv_impl<DenseState>(r, cutoff); }

double gaussian_trace_deficit(const gaussian::StandardForm& form, int cutoff) {
  require_cutoff(cutoff);
  const Husimi h = husimi(form);
  const std::size_t n = static_cast<std::size_t>(cutoff) + 1;
  // Marginal of A: thermal with n_A = (a-1)/2, P(n_A > N) = q^{N+1}, q = (a-1)/(a+1).
  const double q_a = std::max(0.0, (form.a - 1.0) / (form.a + 1.0));
  const double tail_a = std::pow(q_a, static_cast<double>(n));
  // G(y, z) = (4/D) / (1 - s_A y) * sum_j [z w(y)]^j, w(y) = s_B + t^2 y / (1 - s_A y), so
  // sum_{j > N} P(i, j) = [y^i] (4/D) w^{N+1} / [(1 - s_A y)(1 - w)]. Every series below has
  // non-negative coefficients: w_0 = s_B, w_i = t^2 s_A^{i-1}; u = 1/(1 - s_A y), u_i = s_A^i;
  // g = 1/(1 - w) from g_i (1 - s_B) = [i = 0] + sum_{l>=1} w_l g_{i-l}, 1 - s_B = 2(a+1)/D > 0.
  std::vector<double> w(n, 0.0), u(n, 0.0), g(n, 0.0);
  w[0] = h.s_b;
  u[0] = 1.0;
  for (std::size_t i = 1; i < n; ++i) u[i] = u[i - 1] * h.s_a;
  for (std::size_t i = 1; i < n; ++i) w[i] = h.t * h.t * u[i - 1];
  const double one_minus_sb = 1.0 - h.s_b;
  for (std::size_t i = 0; i < n; ++i) {
    double acc = i == 0 ? 1.0 : 0.0;
    for (std::size_t l = 1; l <= i; ++l) acc += w[l] * g[i - l];
    g[i] = acc / one_minus_sb;
  }
  // w^{N+1} by repeated squaring, truncated at degree N.
  std::vector<double> power(n, 0.0), base = w, tmp;
  power[0] = 1.0;
  for (unsigned e = static_cast<unsigned>(n); e > 0; e >>= 1) {
    poll_cancel();
    if (e & 1u) {
      multiply_series(power, base, tmp);
      power.swap(tmp);
    }
    if (e > 1u) {
      multiply_series(base, base, tmp);
      base.swap(tmp);
    }
  }
  multiply_series(power, u, tmp);
  multiply_series(tmp, g, power);
  double tail_b = 0.0;
  for (double x : power) tail_b += x;
  tail_b *= std::exp(h.log_norm);
  return tail_a + tail_b;
}

// ---------------------------------------------------------------- cutoff control

double memory_bytes_for(Engine engine, int cutoff) {
  require_cutoff(cutoff);
  const double l = cutoff + 1.0;
  if (engine == Engine::dense) return 8.0 * l * l * l * l;
  const double n = cutoff;
  return 8.0 * (l * l + n * (n + 1.0) * (2.0 * n + 1.0) / 3.0);
}

CutoffError::CutoffError(int needed_cutoff, double memory_bytes, double limit_bytes)
    : std::runtime_error("truncation needs a cutoff of " + std::to_string(needed_cutoff) +
                         " photons per mode; one state at that cutoff takes " + mebibytes(memory_bytes) +
                         ", above the allowed " + mebibytes(limit_bytes)),
      needed_cutoff_(needed_cutoff), memory_bytes_(memory_bytes), limit_bytes_(limit_bytes) {}

int auto_cutoff_gaussian(const gaussian::StandardForm& form, double tolerance, Engine engine,
                         double max_memory_bytes) {
  if (!(tolerance > 0.0 && tolerance < 1.0))
    throw std::invalid_argument("heraldry::fock::auto_cutoff_gaussian: tolerance must lie in (0, 1), got " +
                                std::to_string(tolerance));
  validate(form);
  // The deficit decreases with N and is bracketed by the marginal tails:
  // max(q_A, q_B)^{N+1} <= deficit(N) <= q_A^{N+1} + q_B^{N+1}.
  const double q = std::max({0.0, (form.a - 1.0) / (form.a + 1.0), (form.b - 1.0) / (form.b + 1.0)});
  if (q == 0.0) return 0;  // the vacuum
  const double log_q = std::log(q);
  auto clamp_int = [](double x) { return static_cast<int>(std::clamp(x, 0.0, double(INT_MAX / 4))); };
  int lo = clamp_int(std::ceil(std::log(tolerance) / log_q) - 1.0);  // deficit(lo - 1) >= tolerance
  lo = std::max(0, lo - 1);
  int hi = clamp_int(std::floor(std::log(tolerance / 2.0) / log_q));  // deficit(hi) < tolerance
  // A cutoff too large to evaluate cheaply whose lower bound already breaks the memory budget:
  // report that lower bound.
  if (hi > 4096 && memory_bytes_for(engine, lo) > max_memory_bytes)
    throw CutoffError(lo, memory_bytes_for(engine, lo), max_memory_bytes);
  while (gaussian_trace_deficit(form, hi) >= tolerance) hi = hi + 1 + hi / 8;  // round-off guard
  if (lo > hi) lo = hi;
  while (lo < hi) {  // invariant: deficit(hi) < tolerance
    const int mid = lo + (hi - lo) / 2;
    if (gaussian_trace_deficit(form, mid) < tolerance)
      hi = mid;
    else
      lo = mid + 1;
  }
  const double memory = memory_bytes_for(engine, hi);
  if (memory > max_memory_bytes) throw CutoffError(hi, memory, max_memory_bytes);
  return hi;
}

}  // namespace heraldry::fock
