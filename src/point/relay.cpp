// The heralded relay (heraldry/relay.hpp): two heralded arms, swapped at the midpoint.
#include "heraldry/relay.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

#include "heraldry/measures.hpp"
#include "heraldry/swap.hpp"
#include "point/exact.hpp"

namespace heraldry::point {

namespace {

// The arm's heralded, unnormalised Fock state at a cutoff, built as evaluate() builds it: the
// leading Gaussian steps on the covariance matrix, the closed form with the trace deficit as
// ledger, then the remaining steps as Kraus sums.
fock::SectorState arm_state(const PointSpec& spec, int cutoff) {
  std::size_t first = 0;
  const gaussian::StandardForm form = detail::gaussian_prefix(spec, first);
  fock::SectorState state = fock::sector_state(form, cutoff);
  state.add_truncation_loss(fock::gaussian_trace_deficit(form, cutoff) - state.truncation_loss());
  fock::Workspace work;
  double cut = 0.0;
  for (std::size_t i = first; i < spec.steps.size(); ++i) {
    steps::StepContext c = detail::step_context(spec, spec.steps[i], steps::Weighting::full, &work);
    c.amplifier_cut_fraction = cut;
    steps::apply(state, spec.steps[i], c);
    cut = c.amplifier_cut_fraction;
  }
  return state;
}

}  // namespace

PointSpec relay_arm(const PointSpec& spec, const link::LinkModel& model, double distance_m) {
  if (model.direct) throw std::logic_error("relay_arm: measured channels cannot be split at a midpoint");
  link::LinkModel arm = model;
  arm.geometry = link::Geometry::one_way;
  PointSpec out = spec;
  out.channel_a = link::Channel{1.0, 0.0};
  out.channel_b = link::link_budget(arm, 0.5 * distance_m).b.channel;
  return out;
}

RelayResult evaluate_relay(const RelaySpec& spec) {
  const double eta = spec.bell_efficiency;
  if (!(eta > 0.0 && eta <= 1.0))
    throw InputError("", 0, "relay.bell_efficiency", std::to_string(eta), "an efficiency in (0, 1]");
  if (!(spec.gain > 0.0) || !std::isfinite(spec.gain))
    throw InputError("", 0, "relay.gain", std::to_string(spec.gain), "a finite gain > 0");
  RelayResult out;
  const double tol = spec.arm.numerics.tolerance;
  PointSpec arm = spec.arm;
  arm.numerics.engine = fock::Engine::sector;  // the swap is a sector-engine kernel
  arm.numerics.tolerance = 0.5 * tol;
  out.arm = evaluate(arm);
  PointResult& r = out.relay;
  r.cutoff_needed = out.arm.cutoff_needed;
  if (out.arm.method == Method::covariance) {
    // Gaussian arms: the swap on the covariance matrices (exact), no Fock state.
    std::size_t first = 0;
    const gaussian::StandardForm form = detail::gaussian_prefix(arm, first);
    const gaussian::StandardForm swapped = spec.gain == 1.0 ? gaussian::swap_unit_gain(form, form, eta)
                                                            : gaussian::swap_feed_forward(form, form, spec.gain, eta);
    r = detail::covariance_figures(swapped);
    r.heralding_rate_hz = out.arm.heralding_rate_hz;
    return out;
  }
  if (out.arm.status != Status::ok) {
    // No heralded state to swap (or a separable one: local operations and classical
    // communication cannot entangle it, E_N = N = 0).
    r.status = out.arm.status;
    r.method = out.arm.method;
    r.success_probability = out.arm.success_probability * out.arm.success_probability;
    return out;
  }
  const int cutoff = std::max(1, out.arm.cutoff);
  const fock::SectorState pair = arm_state(arm, cutoff);
  const double p = pair.trace();
  fock::SwapOptions options;
  options.bell_efficiency = eta;
  options.gain = spec.gain;
  options.max_dropped = 0.25 * tol * tol * p * p;
  options.max_output_cutoff = std::max(cutoff, spec.arm.numerics.max_cutoff);
  const fock::SectorState swapped = fock::swap(pair, pair, options);

  measures::Workspace mw;
  const double trace = swapped.trace();
  r.method = Method::fock;
  r.cutoff = swapped.cutoff();
  r.success_probability = p * p;
  r.amplifier_cut_fraction = out.arm.amplifier_cut_fraction;
  r.false_herald_fraction = 1.0 - (1.0 - out.arm.false_herald_fraction) * (1.0 - out.arm.false_herald_fraction);
  if (!(trace > 0.0) || !(trace > swapped.truncation_loss())) {
    r.status = Status::truncation_budget_missed;
    return out;
  }
  r.truncation_error = std::sqrt(std::max(0.0, swapped.truncation_loss()) / trace);
  const auto e = measures::entanglement(swapped, mw);
  r.negativity = e.negativity;
  r.log_negativity = e.log_negativity;
  r.fidelity = std::clamp(measures::fidelity(swapped, mw), 0.0, 1.0);
  r.status = r.truncation_error <= tol ? Status::ok : Status::truncation_budget_missed;
  for (double x : {r.negativity, r.log_negativity, r.fidelity, r.truncation_error})
    if (!std::isfinite(x)) r.status = Status::invalid_result;
  if (r.status == Status::ok) {
    const double trials =
        steps::trial_rate_hz(spec.arm.source.bandwidth_hz, steps::counters_used(spec.arm.steps, spec.arm.counters));
    r.heralding_rate_hz = trials * r.success_probability;
  }
  return out;
}

}  // namespace heraldry::point
