// The grid of a scenario and the mapping of one grid point to the physics kernel's PointSpec.
#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "heraldry/sweep.hpp"

namespace heraldry::sweep {

namespace {

std::string describe_step_param(const scenario::Step& step, std::string_view key) {
  return std::string(step.type->name) + " on mode " + to_string(step.mode) + ": " + std::string(key);
}

bool protocol_uses_counter(const scenario::Protocol& p, const std::string& name) {
  return std::any_of(p.steps.begin(), p.steps.end(), [&](const scenario::Step& s) { return s.counter == name; });
}

}  // namespace

std::vector<std::size_t> ProtocolPlan::shape() const {
  std::vector<std::size_t> s;
  for (const auto& a : axes) s.push_back(a.values.size());
  return s;
}

std::size_t ProtocolPlan::size() const {
  // Parse refuses grids above numerics.max_points, so the product never overflows here.
  std::size_t n = 1;
  for (const auto& a : axes) {
    if (!a.values.empty() && n > std::numeric_limits<std::size_t>::max() / a.values.size())
      throw std::overflow_error("ProtocolPlan::size: the point count of '" + name + "' overflows");
    n *= a.values.size();
  }
  return n;
}

std::vector<std::size_t> ProtocolPlan::unflatten(std::size_t flat) const {
  std::vector<std::size_t> idx(axes.size());
  for (std::size_t i = axes.size(); i-- > 0;) {
    idx[i] = flat % axes[i].values.size();
    flat /= axes[i].values.size();
  }
  return idx;
}

std::size_t Plan::total_points() const {
  std::size_t n = 0;
  for (const auto& p : protocols) n += p.size();
  return n;
}

Plan make_plan(const scenario::Scenario& sc) {
  Plan plan;
  for (const auto& proto : sc.protocols) {
    ProtocolPlan pp;
    pp.name = proto.name;
    pp.axes.push_back({"distance_m", "m", "distance between source and receiver (one-way) or between the receivers (midpoint)",
                       sc.link.distances_m, -1, -1, "", -1});
    // Swept settings of the source and the link concern every protocol.
    for (std::size_t k = 0; k < sc.settings.size(); ++k) {
      const scenario::SweptSetting& st = sc.settings[k];
      if (!st.counter.empty()) continue;
      pp.axes.push_back({st.name, st.units, st.description, st.values, -1, -1, "", static_cast<int>(k)});
    }
    for (std::size_t s = 0; s < proto.steps.size(); ++s) {
      const scenario::Step& step = proto.steps[s];
      for (std::size_t k = 0; k < step.params.size(); ++k) {
        const scenario::Param& param = step.params[k];
        if (!param.swept()) continue;
        const steps::ParamSchema& ps = step.type->params[k];
        pp.axes.push_back({step.label + "." + std::string(ps.key), std::string(ps.units),
                           describe_step_param(step, ps.key), param.values, static_cast<int>(s), -1,
                           std::string(ps.key), -1});
      }
    }
    for (std::size_t c = 0; c < sc.counters.size(); ++c) {
      const auto& counter = sc.counters[c];
      if (!protocol_uses_counter(proto, counter.name)) continue;
      if (counter.efficiency.swept())
        pp.axes.push_back({"counters." + counter.name + ".efficiency", "1", "counter efficiency",
                           counter.efficiency.values, -1, static_cast<int>(c), "efficiency", -1});
      // A dark rate swept by the user stays a rate on its axis (Hz); resolve converts it per gate.
      if (counter.dark_rate_hz && counter.dark_rate_hz->swept())
        pp.axes.push_back({"counters." + counter.name + ".dark_rate_hz", "Hz", "counter dark-count rate",
                           counter.dark_rate_hz->values, -1, static_cast<int>(c), "dark_rate_hz", -1});
      else if (counter.dark_per_gate.swept())
        pp.axes.push_back({"counters." + counter.name + ".dark_per_gate", "1",
                           counter.kind == scenario::CounterKind::threshold ? "dark-click probability per gate"
                                                                           : "mean dark counts per gate",
                           counter.dark_per_gate.values, -1, static_cast<int>(c), "dark_per_gate", -1});
      for (std::size_t k = 0; k < sc.settings.size(); ++k) {
        const scenario::SweptSetting& st = sc.settings[k];
        if (st.counter != counter.name) continue;
        pp.axes.push_back({st.name, st.units, st.description, st.values, -1, static_cast<int>(c), "", static_cast<int>(k)});
      }
    }
    plan.protocols.push_back(std::move(pp));
  }
  return plan;
}

namespace {

// The value of a step or counter parameter at this grid point: the swept axis value, or the
// parameter's only value.
double value_at(const ProtocolPlan& pp, std::span<const std::size_t> index, int step, int counter,
                const std::string& key, const scenario::Param& param) {
  for (std::size_t a = 1; a < pp.axes.size(); ++a) {
    const Axis& ax = pp.axes[a];
    if (ax.setting < 0 && ax.step == step && ax.counter == counter && ax.key == key) return ax.values[index[a]];
  }
  return param.first();
}

}  // namespace

point::Source source_of(const scenario::Source& source) {
  point::Source src;
  src.squeezing_r = source.squeezing_r;
  src.thermal_photons = source.thermal_photons;
  src.bandwidth_hz = source.bandwidth_hz;
  src.frequency_hz = source.frequency_hz;
  src.frequency_a_hz = source.frequency_a_hz;
  src.frequency_b_hz = source.frequency_b_hz;
  src.state = source.state;
  return src;
}

point::Source source_of(const scenario::Scenario& sc) { return source_of(sc.source); }

point::Numerics numerics_of(const scenario::Scenario& sc) {
  point::Numerics n;
  n.engine = sc.numerics.engine == scenario::EngineKind::dense ? fock::Engine::dense : fock::Engine::sector;
  n.cutoff = sc.numerics.cutoff;
  n.tolerance = sc.numerics.tolerance;
  n.max_memory_bytes = sc.numerics.max_memory_mb * bytes_per_mebibyte;
  n.max_cutoff = sc.numerics.max_cutoff;
  return n;
}

namespace {

// The swept hardware settings at this point, applied to copies of the source, the link model
// and the counters.
struct Hardware {
  scenario::Source source;
  link::LinkModel model;
  std::vector<scenario::Counter> counters;
};

Hardware hardware_at(const scenario::Scenario& sc, const ProtocolPlan& pp, std::span<const std::size_t> index) {
  Hardware h{sc.source, sc.link.model, sc.counters};
  scenario::Counter none;
  for (std::size_t a = 1; a < pp.axes.size(); ++a) {
    const Axis& ax = pp.axes[a];
    if (ax.setting < 0) continue;
    const scenario::SweptSetting& st = sc.settings.at(static_cast<std::size_t>(ax.setting));
    st.apply(h.source, h.model, ax.counter >= 0 ? h.counters.at(static_cast<std::size_t>(ax.counter)) : none,
             ax.values[index[a]]);
  }
  return h;
}

}  // namespace

point::PointSpec resolve(const scenario::Scenario& sc, const Plan& plan, std::size_t protocol,
                         std::span<const std::size_t> index, double distance_m) {
  const ProtocolPlan& pp = plan.protocols.at(protocol);
  const scenario::Protocol& proto = sc.protocols.at(protocol);
  if (index.size() != pp.axes.size()) throw std::invalid_argument("resolve: index rank differs from the grid");
  const double d = distance_m >= 0.0 ? distance_m : pp.axes[0].values[index[0]];

  const Hardware hw = hardware_at(sc, pp, index);
  const scenario::Source& source = hw.source;
  const link::LinkModel& model = hw.model;
  const std::vector<scenario::Counter>& counters = hw.counters;

  point::PointSpec spec;
  spec.source = source_of(source);
  const link::LinkBudget budget = link::link_budget(model, d);
  spec.channel_a = budget.a.channel;
  spec.channel_b = budget.b.channel;

  std::vector<int> counter_slot(sc.counters.size(), -1);
  for (std::size_t s = 0; s < proto.steps.size(); ++s) {
    const scenario::Step& step = proto.steps[s];
    steps::StepSpec out;
    out.type = step.type;
    out.mode = step.mode;
    for (std::size_t k = 0; k < step.params.size(); ++k)
      out.values.push_back(value_at(pp, index, static_cast<int>(s), -1, std::string(step.type->params[k].key),
                                    step.params[k]));
    if (step.type->uses_counter) {
      const auto it = std::find_if(counters.begin(), counters.end(),
                                   [&](const scenario::Counter& c) { return c.name == step.counter; });
      if (it == counters.end()) throw std::logic_error("resolve: undefined counter survived validation");
      const std::size_t ci = static_cast<std::size_t>(it - counters.begin());
      if (counter_slot[ci] < 0) {
        steps::CounterModel m;
        m.kind = it->kind;
        m.efficiency = value_at(pp, index, -1, static_cast<int>(ci), "efficiency", it->efficiency);
        m.dark = value_at(pp, index, -1, static_cast<int>(ci), "dark_per_gate", it->dark_per_gate);
        // A dark rate stays a rate on its axis (Hz); converted per gate here, at this point's gate.
        if (it->dark_rate_hz)
          m.dark = steps::dark_per_gate(
              it->kind, value_at(pp, index, -1, static_cast<int>(ci), "dark_rate_hz", *it->dark_rate_hz), it->gate_s);
        m.gate_s = it->gate_s;
        m.reset_s = it->reset_s;
        counter_slot[ci] = static_cast<int>(spec.counters.size());
        spec.counters.push_back(m);
      }
      out.counter = counter_slot[ci];
    }
    spec.steps.push_back(std::move(out));
  }
  spec.numerics = numerics_of(sc);
  return spec;
}

namespace {

point::PointResult evaluate_resolved(const scenario::Scenario& sc, const Plan& plan, std::size_t protocol,
                                     std::span<const std::size_t> index, double distance_m,
                                     const std::atomic<bool>* cancel) {
  point::PointSpec spec = resolve(sc, plan, protocol, index, distance_m);
  spec.numerics.cancel = cancel;
  const scenario::Protocol& proto = sc.protocols.at(protocol);
  if (!proto.relay) return point::evaluate(spec);
  // The link model with this point's swept hardware (as resolve applies it).
  const ProtocolPlan& pp = plan.protocols.at(protocol);
  const link::LinkModel model = hardware_at(sc, pp, index).model;
  const double d = distance_m >= 0.0 ? distance_m : pp.axes[0].values[index[0]];
  point::RelaySpec relay{point::relay_arm(spec, model, d), proto.relay->bell_efficiency, proto.relay->gain};
  return point::evaluate_relay(relay).relay;
}

}  // namespace

point::PointResult evaluate_point(const scenario::Scenario& sc, const Plan& plan, std::size_t protocol,
                                  std::span<const std::size_t> index, double distance_m,
                                  const std::atomic<bool>* cancel) {
  const CancelScope scope(cancel);  // the swap kernel of a relay polls it too
  try {
    return evaluate_resolved(sc, plan, protocol, index, distance_m, cancel);
  } catch (const InputError& e) {
    // A kernel names the key it checked; the scenario file is the user's.
    if (!e.file().empty()) throw;
    throw InputError(sc.path, e.line(), e.key(), e.value(), e.expected(), e.hint());
  }
}

}  // namespace heraldry::sweep
