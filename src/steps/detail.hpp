// Internals shared by the step files: small combinatorics, the per-shift merge of Kraus
// operators, access to the step context. Not part of the public API.
#pragma once

#include <string>
#include <vector>

#include "heraldry/steps.hpp"

namespace heraldry::steps::detail {

/// C(n, k) in double by the multiplicative formula (exact up to 2^53, then relative error
/// ~ k epsilon); 0 outside 0 <= k <= n.
double binomial(int n, int k);

/// log C(n, k) for large arguments (lgamma).
double log_binomial(int n, int k);

/// x^k with 0^0 = 1 (integer exponent).
double power(double x, int k);

/// Throws InputError(key, value, expected) with an empty file name: the caller (scenario layer)
/// has already located the step; here we name the step parameter.
[[noreturn]] void fail(const std::string& key, double value, const std::string& expected);
[[noreturn]] void fail(const std::string& key, const std::string& value, const std::string& expected);

/// Merges Kraus operators that share a shift: the map rho -> sum_i K_i rho K_i^T restricted to
/// one shift s depends only on the Gram matrix M[n][n'] = sum_i c_i[n] c_i[n'] (the output
/// element (n+s, n'+s) is M[n][n'] rho[n][n']), so any factorisation M = sum_j u_j u_j^T gives
/// the same map. A pivoted Cholesky factorisation keeps at most rank(M) operators. Exact up to
/// round-off; zero operators disappear.
fock::Operation merge_by_shift(const std::vector<fock::ShiftOperator>& kraus);

/// The reading weights w(k) = reading_probability(counter, reading, k, weighting) from k = 0 up
/// to the first k (at most k_max) beyond which |w(k) - limit| < 1e-20, and their limit for
/// k -> infinity (src/steps/effect.cpp).
struct ReadingTail {
  std::vector<double> w;
  double limit = 0.0;
  double at(int k) const;  // w(k), the limit beyond the stored range
};
ReadingTail reading_tail(const CounterModel& counter, int reading, Weighting weighting, int k_max);

/// e(n) = sum_k C(n,k) r^k (1-r)^{n-k} w(k), n = 0..max_photons: a beam splitter sends each
/// photon to the counter with probability r.
std::vector<double> binomial_mixture(const ReadingTail& tail, double reflect, int max_photons);

/// e(n) = sum_k C(n+k,k) (1-x)^{n+1} x^k w(k), n = 0..max_photons: k idler photons of a
/// two-mode squeezer with tanh^2 s = x acting on |n> with a vacuum idler.
std::vector<double> negative_binomial_mixture(const ReadingTail& tail, double x, int max_photons);

/// The counter of a step whose kind uses one; InputError when the context has none.
const CounterModel& counter_of(const StepSpec& step, const StepContext& context);

/// The workspace of the context (one per thread; a local one if the caller gave none).
fock::Workspace& work_of(StepContext& context);

}  // namespace heraldry::steps::detail
