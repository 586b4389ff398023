// The step registry: the single place that lists the kinds of step. A new kind is one file in
// src/steps defining `extern const StepType <name>_step` (its parameters, counter use and
// operation) and one line in HERALDRY_STEP_KINDS below; the scenario reader, the sweep axes and
// the evaluator find it here.
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>
#include <type_traits>

#include "steps/detail.hpp"

#define HERALDRY_STEP_KINDS(X) \
  X(link)                      \
  X(tap)                       \
  X(add)                       \
  X(amplify)                   \
  X(scissors)                  \
  X(loss)

namespace heraldry::steps {

#define HERALDRY_DECLARE_STEP(name) extern const StepType name##_step;
HERALDRY_STEP_KINDS(HERALDRY_DECLARE_STEP)
#undef HERALDRY_DECLARE_STEP

namespace {

const StepType* const kinds[] = {
#define HERALDRY_LIST_STEP(name) &name##_step,
    HERALDRY_STEP_KINDS(HERALDRY_LIST_STEP)
#undef HERALDRY_LIST_STEP
};

}  // namespace

std::span<const StepType* const> registry() { return kinds; }

const StepType* find_step_type(std::string_view name) {
  for (const StepType* t : kinds)
    if (t->name == name) return t;
  return nullptr;
}

const StepType& link_type() { return link_step; }

bool Range::contains(double x) const {
  if (!std::isfinite(x)) return false;
  if (lo_open ? !(x > lo) : !(x >= lo)) return false;
  if (hi_open ? !(x < hi) : !(x <= hi)) return false;
  return true;
}

int StepType::param_index(std::string_view key) const {
  for (std::size_t i = 0; i < params.size(); ++i)
    if (params[i].key == key) return static_cast<int>(i);
  return -1;
}

double StepSpec::value(std::string_view key) const {
  if (type == nullptr) throw std::invalid_argument("heraldry::steps::StepSpec::value: a step without a kind");
  const int i = type->param_index(key);
  if (i < 0 || static_cast<std::size_t>(i) >= values.size())
    throw std::invalid_argument("heraldry::steps: step '" + std::string(type->name) + "' has no parameter '" +
                                std::string(key) + "'");
  return values[static_cast<std::size_t>(i)];
}

void StepSpec::set(std::string_view key, double v) {
  value(key);  // checks that the parameter exists
  values[static_cast<std::size_t>(type->param_index(key))] = v;
}

StepSpec make(std::string_view name, Mode mode, std::initializer_list<std::pair<std::string_view, double>> values,
              int counter) {
  const StepType* type = find_step_type(name);
  if (type == nullptr) throw std::invalid_argument("heraldry::steps::make: no step kind '" + std::string(name) + "'");
  StepSpec s;
  s.type = type;
  s.mode = mode;
  s.counter = counter;
  std::vector<bool> given(type->params.size(), false);
  s.values.assign(type->params.size(), 0.0);
  for (const auto& [key, v] : values) {
    const int i = type->param_index(key);
    if (i < 0)
      throw std::invalid_argument("heraldry::steps::make: step '" + std::string(name) + "' has no parameter '" +
                                  std::string(key) + "'");
    s.values[static_cast<std::size_t>(i)] = v;
    given[static_cast<std::size_t>(i)] = true;
  }
  for (std::size_t i = 0; i < type->params.size(); ++i) {
    if (given[i]) continue;
    if (!type->params[i].fallback)
      throw std::invalid_argument("heraldry::steps::make: step '" + std::string(name) + "' needs '" +
                                  std::string(type->params[i].key) + "'");
    s.values[i] = *type->params[i].fallback;
  }
  return s;
}

std::vector<CounterModel> counters_used(const std::vector<StepSpec>& steps, const std::vector<CounterModel>& counters) {
  std::vector<CounterModel> out;
  std::vector<int> seen;
  for (const auto& s : steps) {
    if (s.type == nullptr || !s.type->uses_counter) continue;
    if (s.counter < 0 || s.counter >= static_cast<int>(counters.size()))
      detail::fail("counter", s.counter, "an index into the counters of the point");
    if (std::find(seen.begin(), seen.end(), s.counter) != seen.end()) continue;
    seen.push_back(s.counter);
    out.push_back(counters[static_cast<std::size_t>(s.counter)]);
  }
  return out;
}

namespace {

template <class State>
void apply_impl(State& state, const StepSpec& step, StepContext& context) {
  if (step.type == nullptr) throw std::invalid_argument("heraldry::steps::apply: a step without a kind");
  if (step.type->channels) {
    const Channels ch = step.type->channels(step, context);
    if (ch.a) fock::apply_channel(state, Mode::A, *ch.a, detail::work_of(context));
    if (ch.b) fock::apply_channel(state, Mode::B, *ch.b, detail::work_of(context));
    return;
  }
  if constexpr (std::is_same_v<State, fock::SectorState>)
    step.type->apply_sector(state, step, context);
  else
    step.type->apply_dense(state, step, context);
}

}  // namespace

void apply(fock::SectorState& state, const StepSpec& step, StepContext& context) { apply_impl(state, step, context); }
void apply(fock::DenseState& state, const StepSpec& step, StepContext& context) { apply_impl(state, step, context); }

namespace detail {

const CounterModel& counter_of(const StepSpec& step, const StepContext& context) {
  if (context.counter == nullptr)
    fail(std::string(step.type ? step.type->name : "step") + ".counter", step.counter,
         "the index of one of the counters of the point");
  return *context.counter;
}

fock::Workspace& work_of(StepContext& context) {
  thread_local fock::Workspace local;
  return context.work ? *context.work : local;
}

}  // namespace detail

}  // namespace heraldry::steps
