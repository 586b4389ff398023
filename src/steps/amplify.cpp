// Step `amplify`: noiseless linear amplification g^n (Ralph & Lund, AIP Conf. Proc. 1110, 155
// (2009)), in the physical form g^{n-N} Pi_N (PHYSICS.md §5.1).
#include <algorithm>
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

namespace heraldry::steps::detail {

// Also books the weight of the input above N that the physical realisation cuts off, as a
// fraction of the step's input (0 for the ideal form, whose N is the cutoff itself).
template <class State>
void apply_amplify(State& state, const StepSpec& step, StepContext& context) {
  const int cutoff = state.cutoff();
  if (step.gain > 1.0 && step.max_photons > 0 && step.max_photons < cutoff) {
    const Eigen::VectorXd p = fock::photon_distribution(state, step.mode);
    const double total = p.sum();
    const double above = p.tail(cutoff - step.max_photons).sum();
    if (total > 0.0)
      context.amplifier_cut_fraction = std::max(context.amplifier_cut_fraction, above / total);
  }
  fock::apply(state, step.mode, amplify_operation(step.gain, step.max_photons, cutoff), context.work);
}
HERALDRY_STEPS_INSTANTIATE(apply_amplify)

}  // namespace heraldry::steps::detail
