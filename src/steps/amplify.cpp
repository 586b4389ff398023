// Step `amplify`: noiseless linear amplification g^n (Ralph & Lund, AIP Conf. Proc. 1110, 155
// (2009)), in the physical form g^{n-N} Pi_N (docs/physics.md §5.1).
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

namespace heraldry::steps {

namespace {

constexpr int max_photons_limit = 400;  // the largest per-mode cutoff the engine accepts

const ParamSchema amplify_params[] = {
    {"gain", "1", "amplitude gain g of g^n", ParamSchema::Type::number, {0.0, unbounded, true, false}, std::nullopt},
    {"max_photons", "1", "largest photon number N the physical realisation keeps (K = g^(n-N) on n <= N)",
     ParamSchema::Type::integer, {1.0, max_photons_limit, false, false}, std::nullopt},
};

// Also books the weight of the input above N that the physical realisation cuts off, as a
// fraction of the step's input (0 for the ideal form, whose N is the cutoff itself).
template <class State>
void apply(State& state, const StepSpec& step, StepContext& context) {
  const int cutoff = state.cutoff();
  const double gain = step.values[0];
  const int big_n = static_cast<int>(step.values[1]);
  if (gain > 1.0 && big_n > 0 && big_n < cutoff) {
    const Eigen::VectorXd p = fock::photon_distribution(state, step.mode);
    const double total = p.sum();
    const double above = p.tail(cutoff - big_n).sum();
    if (total > 0.0) context.amplifier_cut_fraction = std::max(context.amplifier_cut_fraction, above / total);
  }
  fock::apply(state, step.mode, amplify_operation(gain, big_n, cutoff), detail::work_of(context));
}

// K^dagger K = g^{2(n-N)} on n <= N (g > 1), g^{2n} (g <= 1).
std::vector<double> effect(const StepSpec& step, const StepContext&, int max_photons) {
  const double g = step.values[0];
  const int big_n = static_cast<int>(step.values[1]);
  std::vector<double> e(static_cast<std::size_t>(max_photons + 1), 0.0);
  for (int n = 0; n <= max_photons; ++n) {
    if (g <= 1.0) e[n] = std::pow(g, 2.0 * n);
    else if (n <= big_n) e[n] = std::pow(g, 2.0 * (n - big_n));
  }
  return e;
}

}  // namespace

extern const StepType amplify_step{
    .name = "amplify",
    .summary = "noiseless linear amplification g^n, as the success bound of its best realisation on n <= N",
    .role = StepType::Role::herald,
    .params = amplify_params,
    .uses_counter = false,
    .check = nullptr,
    .channels = nullptr,
    .apply_sector = &apply<fock::SectorState>,
    .apply_dense = &apply<fock::DenseState>,
    .effect = &effect,
    .dilation = nullptr,
};

}  // namespace heraldry::steps
