// `heraldry link SCENARIO`: the link budget and the Gaussian (no distillation) figures versus
// distance, with the distances where entanglement and fidelity above 1/2 end.
#include <cmath>
#include <cstdio>
#include <functional>
#include <vector>

#include "cli/commands.hpp"
#include "heraldry/crossing.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::cli {

namespace {

void print_crossing(const char* what, const Crossing& c) {
  switch (c.kind) {
    case Crossing::Kind::crossed: std::printf("%s: %.4g m\n", what, c.distance); break;
    case Crossing::Kind::never_positive:
      std::printf("%s: none on the grid (already lost at %.4g m)\n", what, c.distance);
      break;
    case Crossing::Kind::beyond_grid:
      std::printf("%s: beyond %.4g m\n", what, c.distance);
      break;
  }
}

}  // namespace

int cmd_link(const std::string& path) {
  const scenario::Scenario sc = scenario::load(path);
  const auto& model = sc.link.model;
  const auto& grid = sc.link.distances_m;
  const point::Source source = sweep::source_of(sc);

  std::printf("# %s\n", sc.title.c_str());
  std::printf("# %.4g GHz, squeezing %.3g dB, %.3g thermal photons at the source; %s, %s\n",
              sc.source.frequency_hz * 1e-9, squeezing_db_from_parameter(sc.source.squeezing_r), sc.source.thermal_photons,
              model.medium == link::Medium::air ? "open air" : "cryogenic line",
              model.geometry == link::Geometry::one_way ? "one-way (a stays, b travels)"
                                                         : "midpoint (each mode travels d/2)");
  std::printf("# loss in dB of the travelling mode %s by cause; noise = thermal photons added, (1 - tau) n_E\n",
              model.geometry == link::Geometry::one_way ? "b" : "(per arm)");
  std::printf("%10s %9s %9s %9s %9s %9s %11s %10s %11s %10s %9s %9s %9s\n", "distance_m", "beam_dB",
              "air_dB", "rain_dB", "iface_dB", "line_dB", "tau_a", "noise_a", "tau_b", "noise_b", "E_N",
              "fidelity", "PLOB");
  for (double d : grid) {
    const point::LinkPoint p = point::link_point(source, model, d);
    const link::LinkBudget& b = p.budget;
    const auto& l = b.b.loss;
    const double na = (1.0 - b.a.channel.transmissivity) * b.a.channel.bath_photons;
    const double nb = (1.0 - b.b.channel.transmissivity) * b.b.channel.bath_photons;
    std::printf("%10.4g %9.3g %9.3g %9.3g %9.3g %9.3g %11.8f %10.4g %11.8f %10.4g %9.5f %9.5f %9.4g\n", d,
                l.beam_db, l.air_db, l.rain_db, l.interface_db, l.line_db, b.a.channel.transmissivity, na,
                b.b.channel.transmissivity, nb, p.log_negativity, p.fidelity, p.plob_ebits);
  }
  if (grid.size() > 1) {
    const point::BareCrossings c = point::bare_crossings(source, model, grid);
    print_crossing("entanglement survives (E_N > 0) up to", c.survival);
    print_crossing("teleportation beats the classical 1/2 up to", c.fidelity_half);
  }
  return 0;
}

int cmd_example() {
  const auto text = scenario::demo_text();
  std::fwrite(text.data(), 1, text.size(), stdout);
  return 0;
}

int cmd_check(const std::string& path) {
  const scenario::Scenario sc = scenario::load(path);
  const auto& grid = sc.link.distances_m;
  std::printf("%s: valid scenario \"%s\"\n", path.c_str(), sc.title.c_str());
  std::printf("  distances: %zu (%.4g m to %.4g m), target %.4g m\n", grid.size(), grid.front(), grid.back(),
              sc.link.target_m);
  const sweep::Plan plan = sweep::make_plan(sc);
  for (const auto& pp : plan.protocols) {
    std::printf("  protocol \"%s\": %zu points", pp.name.c_str(), pp.size());
    for (std::size_t a = 1; a < pp.axes.size(); ++a)
      std::printf("%s %s (%zu values)", a == 1 ? "; swept:" : ",", pp.axes[a].name.c_str(), pp.axes[a].values.size());
    std::printf("\n");
  }
  std::printf("  total: %zu points\n", plan.total_points());

  // The cutoff the bare link's state needs at each distance (Gaussian estimate; heralded
  // states have heavier tails and need more, which the run finds itself).
  const point::Numerics numerics = sweep::numerics_of(sc);
  const fock::Engine engine = numerics.engine;
  const double tol = numerics.tolerance;
  const double max_bytes = numerics.max_memory_bytes;
  const point::Source source = sweep::source_of(sc);
  int lo = 0, hi = 0;
  double at = grid.front();
  for (double d : grid) {
    int n = 0;
    try {
      n = fock::auto_cutoff_gaussian(point::bare_state(source, sc.link.model, d), tol * tol, engine, max_bytes);
    } catch (const fock::CutoffError& e) {
      throw InputError(path, 0, "numerics.max_memory_mb", std::to_string(sc.numerics.max_memory_mb),
                       "room for the states the run needs", std::string(e.what()) + " at " + std::to_string(d) + " m");
    }
    if (lo == 0 || n < lo) lo = n;
    if (n > hi) {
      hi = n;
      at = d;
    }
  }
  if (sc.numerics.cutoff > 0) {
    std::printf("  cutoff: fixed at %d (the bare link needs %d..%d for tolerance %.3g)\n", sc.numerics.cutoff, lo, hi, tol);
  } else {
    std::printf("  cutoff: auto; the bare link needs %d..%d for tolerance %.3g (largest at %.4g m, %s per state);\n"
                "          heralded states need more; the run stops at max_cutoff = %d\n",
                lo, hi, tol, at, mebibytes(fock::memory_bytes_for(engine, hi)).c_str(), sc.numerics.max_cutoff);
    if (hi > sc.numerics.max_cutoff)
      std::printf("  warning: points beyond the bare link's cutoff %d > max_cutoff %d will miss the tolerance\n", hi,
                  sc.numerics.max_cutoff);
  }
  return 0;
}

}  // namespace heraldry::cli
