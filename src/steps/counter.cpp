// Photon-counter response models (docs/physics.md §4.2) and the trial-rate bound (§13.3).
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "steps/detail.hpp"

namespace heraldry::steps {

namespace detail {

double binomial(int n, int k) {
  if (k < 0 || k > n) return 0.0;
  k = std::min(k, n - k);
  double c = 1.0;
  for (int i = 1; i <= k; ++i) c = c * (n - k + i) / i;
  return c;
}

double log_binomial(int n, int k) {
  if (k < 0 || k > n) return -std::numeric_limits<double>::infinity();
  return std::lgamma(n + 1.0) - std::lgamma(k + 1.0) - std::lgamma(n - k + 1.0);
}

double power(double x, int k) { return k == 0 ? 1.0 : std::pow(x, k); }

void fail(const std::string& key, const std::string& value, const std::string& expected) {
  throw InputError("", 0, key, value, expected);
}

void fail(const std::string& key, double value, const std::string& expected) {
  const bool integral = std::abs(value) < 1e15 && value == std::floor(value);
  fail(key, integral ? std::to_string(static_cast<long long>(value)) : std::to_string(value), expected);
}

}  // namespace detail

double dark_probability(double rate_hz, double gate_s) {
  if (!(rate_hz >= 0.0) || !std::isfinite(rate_hz))
    detail::fail("dark_rate_hz", rate_hz, "a finite rate >= 0");
  if (!(gate_s > 0.0) || !std::isfinite(gate_s)) detail::fail("gate", gate_s, "a gate length > 0");
  return -std::expm1(-rate_hz * gate_s);
}

double dark_per_gate(CounterKind kind, double rate_hz, double gate_s) {
  const double mean = rate_hz * gate_s;
  return kind == CounterKind::threshold ? -std::expm1(-mean) : mean;
}

void validate(const CounterModel& c, const std::string& key) {
  if (!(c.efficiency >= 0.0 && c.efficiency <= 1.0))
    detail::fail(key + ".efficiency", c.efficiency, "a value in [0, 1]");
  if (c.kind == CounterKind::threshold) {
    // p = 1 is legal (the scenario accepts dark_per_gate = 1, and a huge dark rate rounds to
    // it): every gate clicks, the weights below stay finite (log1p(-1) = -inf, expm1(-inf) = -1).
    if (!(c.dark >= 0.0 && c.dark <= 1.0))
      detail::fail(key + ".dark_per_gate", c.dark, "a probability in [0, 1]");
  } else if (!(c.dark >= 0.0) || !std::isfinite(c.dark)) {
    detail::fail(key + ".dark_per_gate", c.dark, "a mean count >= 0");
  }
  if (!(c.gate_s > 0.0) || !std::isfinite(c.gate_s))
    detail::fail(key + ".gate", c.gate_s, "a gate length > 0");
  if (!(c.reset_s >= 0.0) || !std::isfinite(c.reset_s))
    detail::fail(key + ".reset", c.reset_s, "a dead time >= 0");
}

namespace {

// (1-eta)^k without 0 * log(0) trouble.
double miss_all(double eta, int k) { return detail::power(1.0 - eta, k); }

// 1 - q (1-eta)^k, accurate when both the dark probability and eta k are small.
double one_minus(double q_log, double eta, int k) {
  if (eta >= 1.0) return k > 0 ? 1.0 : -std::expm1(q_log);
  return -std::expm1(q_log + k * std::log1p(-eta));
}

// A genuine herald is one in which the counter received at least as many photons as its reading
// claims (k >= 1 for a click, k >= j for j counts): the heralded state then underwent what the
// reading says, whatever dark counts and misses added to the count.
double threshold_probability(const CounterModel& c, int reading, int k, Weighting w) {
  if (reading == 0) return (1.0 - c.dark) * miss_all(c.efficiency, k);
  if (w == Weighting::genuine && k < 1) return 0.0;
  return one_minus(std::log1p(-c.dark), c.efficiency, k);
}

// sum_{i=0}^{min(j,k)} C(k,i) eta^i (1-eta)^{k-i} e^{-nu} nu^{j-i}/(j-i)!; genuine: 0 for k < j.
double resolving_probability(const CounterModel& c, int j, int k, Weighting w) {
  const double eta = c.efficiency, nu = c.dark;
  const double e_nu = std::exp(-nu);
  auto photon_term = [&](int i) {
    return detail::binomial(k, i) * detail::power(eta, i) * detail::power(1.0 - eta, k - i);
  };
  if (w == Weighting::genuine && k < j) return 0.0;
  double sum = 0.0;
  for (int i = 0; i <= std::min(j, k); ++i) {
    const int m = j - i;
    if (nu == 0.0 && m > 0) continue;
    const double dark_term = m == 0 ? 1.0 : std::exp(m * std::log(nu) - std::lgamma(m + 1.0));
    sum += photon_term(i) * dark_term;
  }
  return sum * e_nu;
}

}  // namespace

double reading_probability(const CounterModel& c, int reading, int photons, Weighting w) {
  if (reading < 0) detail::fail("counts", reading, "a number of counts >= 0");
  if (c.kind == CounterKind::threshold && reading > 1)
    detail::fail("counts", reading, "1 (click) or 0 (no click) for a threshold counter");
  if (photons < 0) return 0.0;
  return c.kind == CounterKind::threshold ? threshold_probability(c, reading, photons, w)
                                          : resolving_probability(c, reading, photons, w);
}

std::vector<double> reading_weights(const CounterModel& c, int reading, int max_photons,
                                    Weighting w) {
  std::vector<double> out(static_cast<std::size_t>(std::max(0, max_photons + 1)));
  for (int k = 0; k <= max_photons; ++k) out[k] = reading_probability(c, reading, k, w);
  return out;
}

double trial_rate_hz(double bandwidth_hz, const std::vector<CounterModel>& counters_used) {
  double rate = bandwidth_hz;
  for (const auto& c : counters_used) rate = std::min(rate, 1.0 / (c.gate_s + c.reset_s));
  return rate;
}

}  // namespace heraldry::steps
