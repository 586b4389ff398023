// The verdict: at the target distance, does each protocol beat the bare link, at what rate, and
// up to which distance? Evaluates the swept settings at the target, keeps the best, refines the
// break-even distances between grid points.
#include <algorithm>
#include <cmath>
#include <functional>
#include <sstream>

#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/verdict.hpp"

namespace heraldry::verdict {

namespace {

// Figures one may quote: ok, or the exact separable result (E_N = 0).
bool usable(const point::PointResult& r) { return has_figures(r.status); }

// A gain smaller than this is round-off, not a gain (E_N and F are computed to ~1e-12; the
// figures' truncation error is bounded by the tolerance, at least 1e-20 of it).
constexpr double gain_floor = 1e-9;

// A protocol without heralded steps (only the link and known losses): the link itself.
bool heralds(const scenario::Protocol& proto) {
  for (const auto& s : proto.steps)
    if (s.type->role == steps::StepType::Role::herald) return true;
  return false;
}

// A setting that did not reach its budget shows no figures in the trade map.
point::PointResult shown(const point::PointResult& r) {
  if (usable(r)) return r;
  point::PointResult blank;
  blank.status = r.status;
  blank.cutoff = r.cutoff;
  blank.cutoff_needed = r.cutoff_needed;
  blank.truncation_error = r.truncation_error;
  blank.amplifier_cut_fraction = r.amplifier_cut_fraction;
  return blank;
}

// One line in words: does the protocol pay off at the target, and at what rate?
std::string summarise(const scenario::Protocol& proto, const ProtocolVerdict& pv, const Verdict& v) {
  const point::PointResult& best = pv.at_target;
  std::ostringstream line;
  line.precision(3);
  std::ostringstream place;
  place.precision(4);
  if (v.measured)
    place << "on the measured link";
  else
    place << "at " << v.target_m << " m";
  if (!usable(best)) {
    line << "no verdict " << place.str() << ": " << to_string(best.status);
    if (best.status == Status::truncation_budget_missed) {
      // Figures kept but flagged: quoted with their error scale, never as a verdict.
      line << " (needs cutoff " << best.cutoff_needed << "); flagged figures at cutoff " << best.cutoff << ": E_N "
           << best.log_negativity << ", F " << best.fidelity << ", P " << best.success_probability
           << ", truncation error " << best.truncation_error;
    }
    return line.str();
  }
  if (!heralds(proto) && !proto.relay) {
    line << "no heralding: this is the link itself (E_N " << best.log_negativity << ", F " << best.fidelity << ")";
    return line.str();
  }
  if (best.status == Status::separable_input) {
    line << "cannot pay off " << place.str()
         << ": the state entering its heralded steps is separable there, and no local stage restores entanglement "
            "(E_N = 0 exactly); F ";
    if (best.fidelity_bound)
      line << "<= 0.5 (the bound for a separable resource)";
    else
      line << best.fidelity << " (<= 0.5)";
    line << "; " << best.heralding_rate_hz << " heralded pairs/s";
    return line.str();
  }
  line << (pv.pays_off_log_negativity ? "pays off" : "does not pay off") << " " << place.str() << ": E_N "
       << best.log_negativity << " vs " << pv.bare_log_negativity << " bare, F " << best.fidelity << " vs "
       << pv.bare_fidelity << " bare";
  if (pv.pays_off_log_negativity && !pv.pays_off_fidelity) line << " (entanglement up, teleportation fidelity not)";
  if (!pv.pays_off_log_negativity && pv.pays_off_fidelity) line << " (fidelity up, entanglement not)";
  line << "; " << best.heralding_rate_hz << " heralded pairs/s";
  line.precision(2);
  line << ", " << 100.0 * best.false_herald_fraction << "% false heralds";
  line.precision(3);
  if (proto.relay) {
    // The heralded relay beside the Gaussian one (conditional swap of the bare arms).
    line << "; relay station (";
    if (proto.relay->gain == 1.0)
      line << "unit-gain swap";
    else
      line << "swap with gain " << proto.relay->gain;
    line << ", Bell efficiency " << proto.relay->bell_efficiency
         << ", both arms herald in the same trial: no quantum memory)";
    if (v.relay_log_negativity) {
      const bool en = best.log_negativity > *v.relay_log_negativity + gain_floor;
      const bool f = best.fidelity > *v.relay_fidelity + gain_floor;
      line << (en && f ? ", beats" : en ? ", beats in E_N (not in fidelity)" : f ? ", beats in fidelity (not in E_N)"
                                                                                 : ", does not beat")
           << " the Gaussian relay (E_N " << *v.relay_log_negativity << ", F " << *v.relay_fidelity << ")";
    }
    return line.str();
  }
  if (v.relay_log_negativity && *v.relay_log_negativity > best.log_negativity)
    line << "; a midpoint relay would do better (E_N " << *v.relay_log_negativity << ")";
  return line.str();
}

}  // namespace

Verdict compute(const scenario::Scenario& sc, const sweep::Plan& plan, std::span<const sweep::ProtocolTable> tables,
                int threads, const std::function<bool()>& stop) {
  auto stopped = [&] { return stop && stop(); };
  Verdict v;
  const auto& grid = sc.link.distances_m;
  const point::Source source = sweep::source_of(sc);
  v.target_m = sc.link.target_m;
  v.measured = sc.link.measured();
  const point::LinkPoint target = point::link_point(source, sc.link.model, v.target_m);
  v.bare_log_negativity = target.log_negativity;
  v.bare_fidelity = target.fidelity;
  v.relay_log_negativity = target.relay_log_negativity;
  v.relay_fidelity = target.relay_fidelity;
  if (grid.size() > 1) {
    const point::BareCrossings bare = point::bare_crossings(source, sc.link.model, grid);
    v.survival = bare.survival;
    v.fidelity_half = bare.fidelity_half;
  }
  const std::size_t np = plan.protocols.size();
  v.protocols.resize(np);

  // 1. Every setting of the swept parameters of every protocol, evaluated at the target
  //    distance (in parallel); each protocol keeps the setting with the largest E_N.
  struct TargetJob {
    std::size_t protocol;
    std::vector<std::size_t> index;
    point::PointResult result;
    gaussian::StandardForm bare;  // the bare link with this setting's hardware
  };
  std::vector<TargetJob> target_jobs;
  for (std::size_t p = 0; p < np; ++p) {
    const sweep::ProtocolPlan& pp = plan.protocols[p];
    const std::size_t slice = pp.size() / pp.axes[0].values.size();
    for (std::size_t s = 0; s < slice; ++s) target_jobs.push_back({p, pp.unflatten(s), {}, {}});
  }
  std::vector<std::size_t> todo(target_jobs.size());
  for (std::size_t j = 0; j < todo.size(); ++j) todo[j] = j;
  sweep::dispatch(todo, threads,
                  [&](std::size_t j) {
                    const point::PointSpec spec =
                        sweep::resolve(sc, plan, target_jobs[j].protocol, target_jobs[j].index, v.target_m);
                    target_jobs[j].bare = point::bare_state(spec);
                    target_jobs[j].result = sweep::evaluate_point(sc, plan, target_jobs[j].protocol, target_jobs[j].index, v.target_m);
                  },
                  stop, {});
  if (stopped()) throw Stopped();
  std::vector<std::vector<std::size_t>> best_index(np);
  std::vector<point::PointResult> best(np);
  std::vector<gaussian::StandardForm> best_bare(np);
  std::vector<bool> have(np, false);
  for (const TargetJob& job : target_jobs) {
    const std::size_t p = job.protocol;
    const point::PointResult& r = job.result;
    if (!have[p] || (usable(r) && (!usable(best[p]) || r.log_negativity > best[p].log_negativity))) {
      best[p] = r;
      best_index[p] = job.index;
      best_bare[p] = job.bare;
      have[p] = true;
    }
  }

  // 2. Crossings along distance with each protocol's best setting held fixed: grid values from
  //    the run, refined between grid points by fresh evaluations. Three per protocol, in parallel.
  // Relay protocols also against the Gaussian relay (two more figures).
  enum Figure { en_vs_bare = 0, f_vs_bare = 1, f_vs_half = 2, en_vs_relay = 3, f_vs_relay = 4 };
  constexpr std::size_t nf = 5;
  std::vector<Crossing> crossings(nf * np);
  auto compared_with_relay = [&](std::size_t p) { return sc.protocols.at(p).relay.has_value() && !v.measured; };
  if (grid.size() > 1) {
    const double step = (grid.back() - grid.front()) / static_cast<double>(grid.size() - 1);
    const double tol = 1e-4 * std::max(step, 1e-12);
    std::vector<std::size_t> jobs;
    for (std::size_t j = 0; j < nf * np; ++j)
      if (j % nf < 3 || compared_with_relay(j / nf)) jobs.push_back(j);
    sweep::dispatch(jobs, threads,
                    [&](std::size_t j) {
                      const std::size_t p = j / nf;
                      const auto figure = static_cast<Figure>(j % nf);
                      const sweep::ProtocolPlan& pp = plan.protocols[p];
                      const sweep::ProtocolTable& table = tables[p];
                      // The bare link of the comparisons has the best setting's hardware (the
                      // grid's /link table holds the first values of swept hardware).
                      // (The Gaussian relay at a distance: the scenario's first hardware.)
                      auto margin = [&](const point::PointResult& r, const gaussian::StandardForm& bare, double d) {
                        if (!usable(r)) return -1.0;
                        // A separable result cannot gain entanglement (both are 0 there: no
                        // break-even beyond survival), and a fidelity that is only its bound 1/2
                        // is no figure to compare.
                        if (r.status == Status::separable_input && figure == en_vs_bare) return -1.0;
                        if (r.fidelity_bound && figure != en_vs_bare) return -1.0;
                        switch (figure) {
                          case en_vs_bare: return r.log_negativity - gaussian::log_negativity(bare);
                          case f_vs_bare: return r.fidelity - gaussian::fidelity(bare);
                          case f_vs_half: return r.fidelity - 0.5;
                          case en_vs_relay:
                            return r.log_negativity - gaussian::log_negativity(point::relay_state(source, sc.link.model, d));
                          case f_vs_relay:
                            return r.fidelity - gaussian::fidelity(point::relay_state(source, sc.link.model, d));
                        }
                        return -1.0;
                      };
                      std::vector<double> values;
                      for (std::size_t di = 0; di < grid.size(); ++di) {
                        std::vector<std::size_t> idx = best_index[p];
                        idx[0] = di;
                        std::size_t flat = 0;
                        for (std::size_t a = 0; a < idx.size(); ++a) flat = flat * pp.axes[a].values.size() + idx[a];
                        values.push_back(table.done[flat]
                                             ? margin(table.points[flat], point::bare_state(sweep::resolve(sc, plan, p, idx)), grid[di])
                                             : -1.0);
                      }
                      auto fn = [&](double d) {
                        const point::PointSpec spec = sweep::resolve(sc, plan, p, best_index[p], d);
                        return margin(sweep::evaluate_point(sc, plan, p, best_index[p], d), point::bare_state(spec), d);
                      };
                      crossings[j] = last_downward_crossing(fn, grid, values, tol);
                    },
                    stop, {});
    if (stopped()) throw Stopped();
  }

  for (std::size_t p = 0; p < np; ++p) {
    const sweep::ProtocolPlan& pp = plan.protocols[p];
    const sweep::ProtocolTable& table = tables[p];
    ProtocolVerdict& pv = v.protocols[p];
    pv.name = pp.name;
    for (std::size_t i = 0; i < table.points.size(); ++i)
      if (!table.done[i] || !usable(table.points[i])) ++pv.failed_points;
    const point::PointResult& b = best[p];
    pv.at_target = b;
    pv.bare_log_negativity = gaussian::log_negativity(best_bare[p]);
    pv.bare_fidelity = gaussian::fidelity(best_bare[p]);
    for (std::size_t a = 1; a < pp.axes.size(); ++a) pv.best.emplace_back(pp.axes[a].name, pp.axes[a].values[best_index[p][a]]);
    if (sc.output.heralds_wanted && b.heralding_rate_hz > 0.0)
      pv.seconds_for_heralds = *sc.output.heralds_wanted / b.heralding_rate_hz;
    pv.pays_off_log_negativity = usable(b) && b.log_negativity > pv.bare_log_negativity + gain_floor;
    pv.pays_off_fidelity = usable(b) && b.fidelity > pv.bare_fidelity + gain_floor;
    if (pp.axes.size() > 1) {
      for (std::size_t a = 1; a < pp.axes.size(); ++a) {
        pv.slice_axes.push_back(pp.axes[a].name);
        pv.slice_shape.push_back(pp.axes[a].values.size());
      }
      for (const TargetJob& job : target_jobs)
        if (job.protocol == p) {
          pv.slice.push_back(shown(job.result));
          pv.slice_bare_log_negativity.push_back(gaussian::log_negativity(job.bare));
        }
    }
    pv.breakeven_log_negativity = crossings[nf * p + en_vs_bare];
    pv.breakeven_fidelity = crossings[nf * p + f_vs_bare];
    pv.fidelity_half = crossings[nf * p + f_vs_half];
    if (compared_with_relay(p) && grid.size() > 1) {
      pv.breakeven_relay_log_negativity = crossings[nf * p + en_vs_relay];
      pv.breakeven_relay_fidelity = crossings[nf * p + f_vs_relay];
    }
    pv.summary = summarise(sc.protocols.at(p), pv, v);
  }
  return v;
}

}  // namespace heraldry::verdict
