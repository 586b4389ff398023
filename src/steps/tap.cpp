// Step `tap`: a beam splitter of transmissivity T sends part of the mode to a photon counter;
// the step is heralded on one reading of that counter (PHYSICS.md §4.1-4.3).
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

namespace heraldry::steps::detail {

template <class State>
void apply_tap(State& state, const StepSpec& step, StepContext& context) {
  fock::apply(state, step.mode,
              tap_operation(step.transmissivity, counter_of(step, context), step.counts, state.cutoff(),
                            context.weighting),
              context.work);
}
HERALDRY_STEPS_INSTANTIATE(apply_tap)

}  // namespace heraldry::steps::detail
