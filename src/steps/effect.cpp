// Effects of heralded steps on photon-number states, without a cutoff: the probability that a
// step heralds on |n> for n up to any depth (docs/physics.md §14.1). Every step kind is
// phase-covariant, so its effect sum_k K_k^dagger K_k is diagonal in photon number and the
// success probability on any state is sum_n e(n) p(n).
#include <algorithm>
#include <cmath>

#include "steps/detail.hpp"

namespace heraldry::steps::detail {

namespace {
// Below this a weight difference is dropped: the effects are exact to this absolute error.
constexpr double negligible = 1e-20;
}  // namespace

ReadingTail reading_tail(const CounterModel& counter, int reading, Weighting weighting, int k_max) {
  ReadingTail t;
  const double eta = counter.efficiency;
  // Limit of w(k) for k -> infinity: a threshold click becomes certain, every other reading
  // (silence, exactly j counts) impossible, once photons can be detected at all.
  const int past = std::max(reading, 1) + 1;
  if (eta > 0.0) {
    t.limit = (counter.kind == CounterKind::threshold && reading == 1) ? 1.0 : 0.0;
  } else {
    t.limit = reading_probability(counter, reading, past, weighting);  // constant beyond `past`
  }
  // |w(k) - limit| decreases monotonically beyond the peak of the binomial in k, at
  // k ~ (reading + 1) / eta; stop once past it and negligible.
  const double peak = eta > 0.0 ? std::ceil((reading + 1.0) / eta) : past;
  for (int k = 0; k <= k_max; ++k) {
    const double w = reading_probability(counter, reading, k, weighting);
    t.w.push_back(w);
    if (k >= past && k >= peak && std::abs(w - t.limit) <= negligible) break;
  }
  return t;
}

double ReadingTail::at(int k) const {
  return k < static_cast<int>(w.size()) ? w[static_cast<std::size_t>(k)] : limit;
}

std::vector<double> binomial_mixture(const ReadingTail& tail, double reflect, int max_photons) {
  std::vector<double> e(static_cast<std::size_t>(max_photons + 1));
  const int kk = static_cast<int>(tail.w.size()) - 1;
  if (reflect <= 0.0) {
    std::fill(e.begin(), e.end(), tail.at(0));
    return e;
  }
  if (reflect >= 1.0) {
    for (int n = 0; n <= max_photons; ++n) e[n] = tail.at(n);
    return e;
  }
  const double log_r = std::log(reflect), log_t = std::log1p(-reflect);
  for (int n = 0; n <= max_photons; ++n) {
    // sum_{k <= min(n, K)} C(n,k) r^k (1-r)^{n-k} (w(k) - limit), in logs (n (1-r) may underflow).
    double log_b = n * log_t, sum = 0.0;
    const int top = std::min(n, kk);
    for (int k = 0; k <= top; ++k) {
      if (k > 0) log_b += std::log(static_cast<double>(n - k + 1)) - std::log(static_cast<double>(k)) + log_r - log_t;
      sum += std::exp(log_b) * (tail.w[static_cast<std::size_t>(k)] - tail.limit);
    }
    e[n] = tail.limit + sum;
  }
  return e;
}

std::vector<double> negative_binomial_mixture(const ReadingTail& tail, double x, int max_photons) {
  std::vector<double> e(static_cast<std::size_t>(max_photons + 1));
  if (x <= 0.0) {
    std::fill(e.begin(), e.end(), tail.at(0));
    return e;
  }
  const int kk = static_cast<int>(tail.w.size()) - 1;
  const double log_x = std::log(x), log_1mx = std::log1p(-x);
  for (int n = 0; n <= max_photons; ++n) {
    // P(k | n) = C(n+k, k) (1-x)^{n+1} x^k: k idler photons when |n> is amplified.
    double log_p = (n + 1.0) * log_1mx, sum = 0.0;
    for (int k = 0; k <= kk; ++k) {
      if (k > 0) log_p += std::log(static_cast<double>(n + k)) - std::log(static_cast<double>(k)) + log_x;
      sum += std::exp(log_p) * (tail.w[static_cast<std::size_t>(k)] - tail.limit);
    }
    e[n] = tail.limit + sum;
  }
  return e;
}

}  // namespace heraldry::steps::detail
