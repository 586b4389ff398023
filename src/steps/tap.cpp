// Step `tap`: a beam splitter of transmissivity T sends part of the mode to a photon counter;
// the step is heralded on one reading of that counter (docs/physics.md §4.1-4.3).
#include <cmath>

#include "steps/detail.hpp"

namespace heraldry::steps {

fock::Operation tap_operation(double transmissivity, const CounterModel& counter, int reading,
                              int cutoff, Weighting weighting) {
  const double t = transmissivity;
  if (!(t >= 0.0 && t <= 1.0)) detail::fail("tap.transmissivity", t, "a value in [0, 1]");
  validate(counter, "tap.counter");
  const std::vector<double> w = reading_weights(counter, reading, cutoff, weighting);
  fock::Operation op;
  // k photons reflected to the counter: <n-k| A_k |n> = sqrt(C(n,k) T^{n-k} (1-T)^k).
  for (int k = 0; k <= cutoff; ++k) {
    if (w[k] == 0.0) continue;
    fock::ShiftOperator kraus{-k, std::vector<double>(cutoff + 1, 0.0)};
    bool any = false;
    for (int n = k; n <= cutoff; ++n) {
      const double p = detail::binomial(n, k) * detail::power(t, n - k) * detail::power(1.0 - t, k);
      kraus.coeff[n] = std::sqrt(w[k] * p);
      any = any || kraus.coeff[n] != 0.0;
    }
    if (any) op.kraus.push_back(std::move(kraus));
  }
  return op;
}

}  // namespace heraldry::steps

namespace heraldry::steps {

namespace {

constexpr int max_counts = 400;  // the largest per-mode cutoff the engine accepts

const ParamSchema tap_params[] = {
    {"transmissivity", "1", "tap beam-splitter transmissivity (power kept in the mode)", ParamSchema::Type::number,
     {0.0, 1.0, true, false}, std::nullopt},
    {"counts", "1", "herald on exactly this many counts (1 = a click for a threshold counter)",
     ParamSchema::Type::integer, {1.0, max_counts, false, false}, 1.0},
};

void check(const StepSpec& step, const CounterModel& counter, std::string_view counter_name) {
  const double counts = step.value("counts");
  if (counts > 1.0 && counter.kind == CounterKind::threshold)
    throw InputError("", 0, "counts", std::to_string(static_cast<int>(counts)),
                     "1 with the threshold counter '" + std::string(counter_name) + "'",
                     "counts > 1 needs kind = \"resolving\"");
}

template <class State>
void apply(State& state, const StepSpec& step, StepContext& context) {
  fock::apply(state, step.mode,
              tap_operation(step.values[0], detail::counter_of(step, context), static_cast<int>(step.values[1]),
                            state.cutoff(), context.weighting),
              detail::work_of(context));
}

// P(herald | n photons): each photon reaches the counter with probability 1 - T.
std::vector<double> effect(const StepSpec& step, const StepContext& context, int max_photons) {
  const CounterModel& counter = detail::counter_of(step, context);
  const detail::ReadingTail tail =
      detail::reading_tail(counter, static_cast<int>(step.values[1]), context.weighting, max_photons);
  return detail::binomial_mixture(tail, 1.0 - step.values[0], max_photons);
}

// A beam splitter with the counter's vacuum port: x' = sqrt(T) x + sqrt(1-T) x_c (both
// quadratures alike), the ancilla x_c' = -sqrt(1-T) x + sqrt(T) x_c.
std::optional<GaussianDilation> dilation(const StepSpec& step, const CounterModel& counter) {
  if (counter.kind != CounterKind::threshold || step.values[1] != 1.0) return std::nullopt;
  const double t = std::sqrt(step.values[0]), r = std::sqrt(1.0 - step.values[0]);
  GaussianDilation d;
  d.symplectic.setZero();
  d.symplectic.topLeftCorner<2, 2>() = t * Eigen::Matrix2d::Identity();
  d.symplectic.topRightCorner<2, 2>() = r * Eigen::Matrix2d::Identity();
  d.symplectic.bottomLeftCorner<2, 2>() = -r * Eigen::Matrix2d::Identity();
  d.symplectic.bottomRightCorner<2, 2>() = t * Eigen::Matrix2d::Identity();
  d.reading = 1;
  return d;
}

}  // namespace

extern const StepType tap_step{
    .name = "tap",
    .summary = "beam-splitter tap into a photon counter, heralded on a click (or on exactly `counts` counts)",
    .role = StepType::Role::herald,
    .params = tap_params,
    .uses_counter = true,
    .check = &check,
    .channels = nullptr,
    .apply_sector = &apply<fock::SectorState>,
    .apply_dense = &apply<fock::DenseState>,
    .effect = &effect,
    .dilation = &dilation,
};

}  // namespace heraldry::steps
