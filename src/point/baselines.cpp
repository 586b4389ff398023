// The Gaussian baselines every command shares: the bare link, the midpoint relay, capacity
// bounds, the link table and the bare link's crossings (docs/physics.md §2, §6.2, §7.4, §8, §9).
#include <cmath>
#include <functional>
#include <limits>
#include <stdexcept>

#include "heraldry/point.hpp"

namespace heraldry::point {

double mode_frequency_hz(const Source& source, Mode mode) {
  const auto& own = mode == Mode::A ? source.frequency_a_hz : source.frequency_b_hz;
  return own ? *own : source.frequency_hz;
}

gaussian::StandardForm source_state(const Source& source) {
  if (source.state) return *source.state;
  return gaussian::tmst(source.squeezing_r, source.thermal_photons);
}

gaussian::StandardForm bare_state(const PointSpec& spec) {
  return gaussian::apply(gaussian::apply(source_state(spec.source), Mode::A, spec.channel_a), Mode::B, spec.channel_b);
}

gaussian::StandardForm bare_state(const Source& source, const link::LinkBudget& budget) {
  const auto s = gaussian::apply(source_state(source), Mode::A, budget.a.channel);
  return gaussian::apply(s, Mode::B, budget.b.channel);
}

gaussian::StandardForm bare_state(const Source& source, const link::LinkModel& model, double distance_m) {
  return bare_state(source, link::link_budget(model, distance_m));
}

double bare_signed_log_negativity(const Source& source, const link::LinkModel& model, double distance_m) {
  return -std::log2(gaussian::smallest_pt_symplectic(bare_state(source, model, distance_m)));
}

gaussian::StandardForm relay_state(const Source& source, const link::LinkModel& model, double distance_m) {
  if (model.direct) throw std::logic_error("relay_state: measured channels cannot be split at a midpoint");
  link::LinkModel arm = model;
  arm.geometry = link::Geometry::one_way;
  const link::LinkBudget half = link::link_budget(arm, 0.5 * distance_m);
  const auto pair = gaussian::apply(source_state(source), Mode::B, half.b.channel);
  return gaussian::swap(pair, pair);
}

double plob_ebits(const link::LinkBudget& budget, link::Geometry geometry) {
  const double b = gaussian::plob_bound(budget.b.channel);
  return geometry == link::Geometry::midpoint ? std::min(b, gaussian::plob_bound(budget.a.channel)) : b;
}

double rci_ebits(const link::LinkBudget& budget, link::Geometry geometry) {
  const double b = gaussian::rci_bound(budget.b.channel);
  return geometry == link::Geometry::midpoint ? std::min(b, gaussian::rci_bound(budget.a.channel)) : b;
}

LinkPoint link_point(const Source& source, const link::LinkModel& model, double distance_m) {
  LinkPoint p;
  p.distance_m = distance_m;
  p.budget = link::link_budget(model, distance_m);
  p.state = bare_state(source, p.budget);
  p.negativity = gaussian::negativity(p.state);
  p.log_negativity = gaussian::log_negativity(p.state);
  p.fidelity = gaussian::fidelity(p.state);
  p.plob_ebits = plob_ebits(p.budget, model.geometry);
  p.rci_ebits = rci_ebits(p.budget, model.geometry);
  if (!model.direct) {
    const auto relay = relay_state(source, model, distance_m);
    p.relay_log_negativity = gaussian::log_negativity(relay);
    p.relay_fidelity = gaussian::fidelity(relay);
  }
  return p;
}

LinkTable link_table(const Source& source, const link::LinkModel& model, std::span<const double> grid) {
  LinkTable t;
  // A lossless path has an unbounded capacity; the file stores the largest double instead of inf.
  auto finite = [](double x) { return std::isinf(x) ? std::numeric_limits<double>::max() : x; };
  for (double d : grid) {
    const LinkPoint p = link_point(source, model, d);
    t.transmissivity_a.push_back(p.budget.a.channel.transmissivity);
    t.transmissivity_b.push_back(p.budget.b.channel.transmissivity);
    t.bath_photons_a.push_back(p.budget.a.channel.bath_photons);
    t.bath_photons_b.push_back(p.budget.b.channel.bath_photons);
    t.negativity.push_back(p.negativity);
    t.log_negativity.push_back(p.log_negativity);
    t.fidelity.push_back(p.fidelity);
    t.plob_ebits.push_back(finite(p.plob_ebits));
    t.rci_ebits.push_back(finite(p.rci_ebits));
    if (p.relay_log_negativity) {
      t.relay_log_negativity.push_back(*p.relay_log_negativity);
      t.relay_fidelity.push_back(*p.relay_fidelity);
    }
  }
  return t;
}

// A path whose every stage couples in vacuum (bath 0 on both modes at every distance): a line at
// 0 K, or measured channels without noise. Checked at the grid's ends and far beyond.
bool pure_loss(const link::LinkModel& model, std::span<const double> grid) {
  for (double d : {grid.front(), grid.back(), 1e7}) {
    const link::LinkBudget b = link::link_budget(model, d);
    if (b.a.channel.bath_photons != 0.0 || b.b.channel.bath_photons != 0.0) return false;
  }
  return true;
}

BareCrossings bare_crossings(const Source& source, const link::LinkModel& model, std::span<const double> grid) {
  const std::function<double(double)> en = [&](double d) { return bare_signed_log_negativity(source, model, d); };
  const std::function<double(double)> fh = [&](double d) {
    return gaussian::fidelity(bare_state(source, model, d)) - 0.5;
  };
  auto scan = [&](const std::function<double(double)>& f) {
    const Crossing c = last_downward_crossing(f, grid);
    return c.kind == Crossing::Kind::beyond_grid ? continue_crossing(f, grid.back(), 1e7) : c;
  };
  BareCrossings out{scan(en), scan(fh)};
  // Pure loss never breaks entanglement: in standard form (a-1)(b-1) < c^2 is kept, since loss
  // of transmissivity tau on a mode scales b-1 (or a-1) and c^2 both by tau (closed form). A
  // numerical "crossing" far out is the round-off of E_N -> 0, not a physical limit.
  if (out.survival.kind != Crossing::Kind::never_positive && pure_loss(model, grid))
    out.survival = {Crossing::Kind::never_crosses, grid.back()};
  return out;
}

}  // namespace heraldry::point
