// Step `link`: each mode through its own link channel (channel_a on A, channel_b on B), as
// computed by the link model for the point's distance.
#include "steps/detail.hpp"

namespace heraldry::steps::detail {

template <class State>
void apply_link(State& state, const StepSpec&, StepContext& context) {
  fock::apply_channel(state, Mode::A, context.point.channel_a, context.work);
  fock::apply_channel(state, Mode::B, context.point.channel_b, context.work);
}
HERALDRY_STEPS_INSTANTIATE(apply_link)

}  // namespace heraldry::steps::detail
