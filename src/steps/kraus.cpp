// Shared Kraus helpers of the steps: the per-shift merge.
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>

#include "steps/detail.hpp"

namespace heraldry::steps::detail {

fock::Operation merge_by_shift(const std::vector<fock::ShiftOperator>& kraus) {
  std::map<int, std::vector<const fock::ShiftOperator*>> groups;
  for (const auto& k : kraus) groups[k.shift].push_back(&k);

  fock::Operation out;
  for (const auto& [shift, ops] : groups) {
    std::size_t size = 0;
    for (const auto* k : ops) size = std::max(size, k->coeff.size());
    // The support: input photon numbers with a non-zero coefficient in some operator.
    std::vector<std::size_t> support;
    for (std::size_t n = 0; n < size; ++n)
      for (const auto* k : ops)
        if (n < k->coeff.size() && k->coeff[n] != 0.0) {
          support.push_back(n);
          break;
        }
    const std::size_t m = support.size();
    if (m == 0) continue;
    // Gram matrix over the support.
    std::vector<double> gram(m * m, 0.0);
    for (const auto* k : ops)
      for (std::size_t i = 0; i < m; ++i) {
        const double ci = support[i] < k->coeff.size() ? k->coeff[support[i]] : 0.0;
        if (ci == 0.0) continue;
        for (std::size_t j = 0; j < m; ++j) {
          const double cj = support[j] < k->coeff.size() ? k->coeff[support[j]] : 0.0;
          gram[i * m + j] += ci * cj;
        }
      }
    // Outer-product pivoted Cholesky: peel off the largest remaining diagonal until what is
    // left is round-off relative to each original diagonal entry.
    const std::vector<double> original = [&] {
      std::vector<double> d(m);
      for (std::size_t i = 0; i < m; ++i) d[i] = gram[i * m + i];
      return d;
    }();
    constexpr double relative_floor = 64.0 * std::numeric_limits<double>::epsilon();
    for (std::size_t step = 0; step < m; ++step) {
      std::size_t pivot = m;
      double best = 0.0;
      for (std::size_t i = 0; i < m; ++i) {
        const double d = gram[i * m + i];
        if (d > relative_floor * original[i] && d > best) {
          best = d;
          pivot = i;
        }
      }
      if (pivot == m) break;
      const double root = std::sqrt(best);
      std::vector<double> u(m);
      for (std::size_t i = 0; i < m; ++i) u[i] = gram[i * m + pivot] / root;
      u[pivot] = root;
      for (std::size_t i = 0; i < m; ++i)
        for (std::size_t j = 0; j < m; ++j) gram[i * m + j] -= u[i] * u[j];
      fock::ShiftOperator op;
      op.shift = shift;
      op.coeff.assign(size, 0.0);
      for (std::size_t i = 0; i < m; ++i) op.coeff[support[i]] = u[i];
      out.kraus.push_back(std::move(op));
    }
  }
  return out;
}

}  // namespace heraldry::steps::detail
