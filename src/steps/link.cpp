// Step `link`: each mode through its own link channel (channel a on mode a, channel b on mode
// b), as the link model computes them for the point's distance. Exactly one per protocol.
#include "steps/detail.hpp"

namespace heraldry::steps {

namespace {

Channels channels(const StepSpec&, const StepContext& context) { return {context.link_a, context.link_b}; }

}  // namespace

extern const StepType link_step{
    .name = "link",
    .summary = "the link itself: each mode through its own thermal-loss channel",
    .role = StepType::Role::link,
    .params = {},
    .uses_counter = false,
    .check = nullptr,
    .channels = &channels,
    .apply_sector = nullptr,
    .apply_dense = nullptr,
};

}  // namespace heraldry::steps
