// Step `loss`: a known extra thermal-loss channel (transmissivity, bath occupation) on one mode,
// e.g. a lossy cable at some temperature (PHYSICS.md §2.1, §3.3).
#include <cmath>

#include "steps/detail.hpp"

namespace heraldry::steps::detail {

template <class State>
void apply_loss(State& state, const StepSpec& step, StepContext& context) {
  fock::apply_channel(state, step.mode, link::Channel{step.transmissivity, step.bath_photons}, context.work);
}
HERALDRY_STEPS_INSTANTIATE(apply_loss)

}  // namespace heraldry::steps::detail
