// The step registry: StepKind -> the function that applies it, for both engines.
#include <array>
#include <string>

#include "steps/detail.hpp"

namespace heraldry::steps {

const char* to_string(StepKind kind) {
  switch (kind) {
    case StepKind::link: return "link";
    case StepKind::tap: return "tap";
    case StepKind::add: return "add";
    case StepKind::amplify: return "amplify";
    case StepKind::scissors: return "scissors";
    case StepKind::loss: return "loss";
  }
  return "unknown";
}

namespace detail {

namespace {

template <class State>
struct Entry {
  StepKind kind;
  StepFunction<State> apply;
};

template <class State>
constexpr std::array<Entry<State>, 6> table{{
    {StepKind::link, &apply_link<State>},
    {StepKind::tap, &apply_tap<State>},
    {StepKind::add, &apply_add<State>},
    {StepKind::amplify, &apply_amplify<State>},
    {StepKind::scissors, &apply_scissors<State>},
    {StepKind::loss, &apply_loss<State>},
}};

}  // namespace

template <class State>
StepFunction<State> step_function(StepKind kind) {
  for (const auto& e : table<State>)
    if (e.kind == kind) return e.apply;
  fail("step", static_cast<double>(kind), "a known step kind");
}
template StepFunction<fock::SectorState> step_function<fock::SectorState>(StepKind);
template StepFunction<fock::DenseState> step_function<fock::DenseState>(StepKind);

const CounterModel& counter_of(const StepSpec& step, const StepContext& context) {
  const auto& counters = context.point.counters;
  if (step.counter < 0 || step.counter >= static_cast<int>(counters.size()))
    fail(std::string(to_string(step.kind)) + ".counter", step.counter,
         "the index of one of the " + std::to_string(counters.size()) + " counters of the point");
  return counters[static_cast<std::size_t>(step.counter)];
}

}  // namespace detail

}  // namespace heraldry::steps
