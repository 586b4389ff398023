// Step `amplify`: noiseless linear amplification g^n (Ralph & Lund, AIP Conf. Proc. 1110, 155
// (2009)), in the physical form g^{n-N} Pi_N (PHYSICS.md §5.1).
#include <cmath>

#include "steps/detail.hpp"

namespace heraldry::steps {

fock::Operation amplify_operation(double gain, int max_photons, int cutoff) {
  const double g = gain;
  if (!(g > 0.0) || !std::isfinite(g)) detail::fail("amplify.gain", g, "a gain > 0");
  if (max_photons < 0) detail::fail("amplify.max_photons", max_photons, "an integer >= 0 (0: ideal)");
  fock::ShiftOperator k{0, std::vector<double>(cutoff + 1, 0.0)};
  if (g <= 1.0) {
    for (int n = 0; n <= cutoff; ++n) k.coeff[n] = std::pow(g, n);
  } else {
    // K = g^{n-N} Pi_N: K^T K = g^{2(n-N)} <= 1 for n <= N, the largest such normalisation.
    const int big_n = max_photons > 0 ? max_photons : cutoff;
    for (int n = 0; n <= std::min(big_n, cutoff); ++n) k.coeff[n] = std::pow(g, n - big_n);
  }
  return fock::Operation{{std::move(k)}};
}

}  // namespace heraldry::steps
