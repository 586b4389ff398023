// Step `loss`: a known extra thermal-loss channel on one mode, e.g. a lossy cable at some
// temperature: transmissivity tau, environment occupation n = Planck(f, T) at the mode's carrier
// (docs/physics.md §2.1, §2.4).
#include <cmath>

#include "steps/detail.hpp"

namespace heraldry::steps {

namespace {

const ParamSchema loss_params[] = {
    {"transmissivity", "1", "power transmissivity of the extra loss", ParamSchema::Type::number, {0.0, 1.0, true, false},
     std::nullopt, "loss_db", {0.0, unbounded, false, false}, &transmissivity_from_db},
    {"temperature_k", "K", "temperature of what couples in at the loss", ParamSchema::Type::number,
     {0.0, 1.0e4, false, false}, 0.0},  // up to 10^4 K, as every temperature of a scenario
};

Channels channels(const StepSpec& step, const StepContext& context) {
  const link::Channel c{step.values[0], link::planck_occupation(context.frequency_hz, step.values[1])};
  Channels out;
  (step.mode == Mode::A ? out.a : out.b) = c;
  return out;
}

}  // namespace

extern const StepType loss_step{
    .name = "loss",
    .summary = "extra known loss at a temperature (a thermal-loss channel)",
    .role = StepType::Role::channel,
    .params = loss_params,
    .uses_counter = false,
    .check = nullptr,
    .channels = &channels,
    .apply_sector = nullptr,
    .apply_dense = nullptr,
};

}  // namespace heraldry::steps
