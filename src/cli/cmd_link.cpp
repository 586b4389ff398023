// `heraldry link SCENARIO`: the link budget and the Gaussian (no distillation) figures versus
// distance, with the distances where entanglement and fidelity above 1/2 end.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <vector>

#include "cli/commands.hpp"
#include "cli/json.hpp"
#include "heraldry/crossing.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/point.hpp"
#include "heraldry/run.hpp"
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
    case Crossing::Kind::never_crosses:
      std::printf("%s: every distance (pure loss never breaks entanglement)\n", what);
      break;
  }
}

// "42 s", "12.5 min", "3.2 h".
std::string duration_text(double s) {
  char buf[32];
  if (s < 60.0)
    std::snprintf(buf, sizeof buf, "%.2g s", s);
  else if (s < 3600.0)
    std::snprintf(buf, sizeof buf, "%.1f min", s / 60.0);
  else
    std::snprintf(buf, sizeof buf, "%.1f h", s / 3600.0);
  return buf;
}

const char* crossing_kind(Crossing::Kind k) {
  switch (k) {
    case Crossing::Kind::crossed: return "crossed";
    case Crossing::Kind::never_positive: return "never";
    case Crossing::Kind::beyond_grid: return "beyond grid";
    case Crossing::Kind::never_crosses: return "never breaks";
  }
  return "?";
}

// The words of the result file's *_kind attributes.
std::string crossing_json(const Crossing& c) {
  return "{\"kind\": " + json_string(crossing_kind(c.kind)) + ", \"distance_m\": " +
         (c.kind == Crossing::Kind::never_crosses ? std::string("null") : json_number(c.distance)) + "}";
}

// The table as one JSON object: every column as an array (same names as the text header), their
// units, and the bare link's crossings (null for measured channels, which have no distance).
std::string link_json(const scenario::Scenario& sc, const std::vector<sweep::LinkColumn>& columns) {
  const bool measured = sc.link.measured();
  std::string out = "{\"title\": " + json_string(sc.title) + ", \"measured\": " + (measured ? "true" : "false") +
                    ", \"geometry\": " +
                    json_string(sc.link.model.geometry == link::Geometry::one_way ? "one-way" : "midpoint") +
                    ", \"columns\": {";
  for (const sweep::LinkColumn& c : columns)
    out += std::string(&c == &columns.front() ? "" : ", ") + json_string(c.name) + ": " + json_array(c.values);
  out += "}, \"units\": {";
  for (const sweep::LinkColumn& c : columns)
    out += std::string(&c == &columns.front() ? "" : ", ") + json_string(c.name) + ": " + json_string(c.units);
  out += "}";
  const auto& grid = sc.link.distances_m;
  if (!measured && grid.size() > 1) {
    const point::BareCrossings c = point::bare_crossings(sweep::source_of(sc), sc.link.model, grid);
    out += ", \"survival\": " + crossing_json(c.survival) + ", \"fidelity_half\": " + crossing_json(c.fidelity_half);
  } else {
    out += ", \"survival\": null, \"fidelity_half\": null";
  }
  return out + "}\n";
}

}  // namespace

std::string antenna_caution(const scenario::Scenario& sc) {
  const auto& m = sc.link.model;
  if (m.direct || m.medium != link::Medium::air || !(m.antenna || m.source_antenna)) return {};
  if (!link::uses_ideal_antennas(m)) return {};
  return "caution: " + link::ideal_antenna_caution() +
         " (typical magnitudes: common practice and from memory; give your antennas' spillover_loss, "
         "ohmic_loss_db and return_loss_db in [link.antenna])";
}

int cmd_link(const std::string& path, bool json) {
  const scenario::Scenario sc = scenario::load(path);
  const auto& model = sc.link.model;
  const auto& grid = sc.link.distances_m;
  const point::Source source = sweep::source_of(sc);
  const bool measured = sc.link.measured();
  const std::vector<sweep::LinkColumn> columns = sweep::link_columns(sc);
  if (json) {
    std::fputs(link_json(sc, columns).c_str(), stdout);
    return 0;
  }

  std::printf("# %s\n", sc.title.c_str());
  std::string source_text;
  char buf[256];
  if (sc.source.given_as == "covariance") {
    source_text = "a measured covariance matrix";
  } else {
    std::snprintf(buf, sizeof buf, "squeezing %.3g dB, %.3g thermal photons", squeezing_db_from_parameter(sc.source.squeezing_r),
                  sc.source.thermal_photons);
    source_text = buf;
  }
  std::string carriers;
  if (sc.source.frequency_a_hz || sc.source.frequency_b_hz) {
    std::snprintf(buf, sizeof buf, "%.4g GHz (mode a) and %.4g GHz (mode b)",
                  link::mode_frequency_hz(model, Mode::A) * 1e-9, link::mode_frequency_hz(model, Mode::B) * 1e-9);
    carriers = buf;
  } else {
    std::snprintf(buf, sizeof buf, "%.4g GHz", sc.source.frequency_hz * 1e-9);
    carriers = buf;
  }
  if (measured)
    std::printf("# %s, %s at the source; one measured link (the [link.direct] channels, no distance axis)\n",
                carriers.c_str(), source_text.c_str());
  else
    std::printf("# %s, %s at the source; %s, %s\n", carriers.c_str(), source_text.c_str(),
                model.medium == link::Medium::air ? "open air" : "cryogenic line",
                model.geometry == link::Geometry::one_way ? "one-way (a stays, b travels)"
                                                           : "midpoint (each mode travels d/2)");
  if (const std::string caution = antenna_caution(sc); !caution.empty()) std::printf("# %s\n", caution.c_str());
  if (!sc.settings.empty()) {
    std::string names;
    for (const auto& st : sc.settings) names += (names.empty() ? "" : ", ") + st.name;
    std::printf("# swept hardware (%s) at its first value here; `heraldry run` sweeps it\n", names.c_str());
  }
  std::printf("# loss in dB of the travelling mode %s by cause; noise = thermal photons added, (1 - tau) n_E;\n"
              "# spill_n, ohmic_n, match_n: the photons the antennas' spillover, ohmic and mismatch losses add to it\n",
              model.geometry == link::Geometry::one_way ? "b" : "(per arm)");
  for (const sweep::LinkColumn& c : columns) std::printf("%s%*s", &c == &columns.front() ? "" : " ", c.width, c.name.c_str());
  std::printf("\n");
  for (std::size_t i = 0; i < grid.size(); ++i) {
    for (const sweep::LinkColumn& c : columns) {
      if (&c != &columns.front()) std::printf(" ");
      if (measured && &c == &columns.front())
        std::printf("%*s", c.width, "measured");
      else
        std::printf(c.format, c.values[i]);
    }
    std::printf("\n");
  }
  if (measured) {
    const point::LinkPoint p = point::link_point(source, model, 0.0);
    std::printf("the measured link %s (E_N %.6g ebit); teleportation fidelity %.6g %s the classical 1/2\n",
                p.log_negativity > 0.0 ? "keeps entanglement" : "is separable: no local stage can restore entanglement",
                p.log_negativity, p.fidelity, p.fidelity > 0.5 ? "beats" : "does not beat");
  } else if (grid.size() > 1) {
    const point::BareCrossings c = point::bare_crossings(source, model, grid);
    print_crossing("entanglement survives (E_N > 0) up to", c.survival);
    print_crossing("teleportation beats the classical 1/2 up to", c.fidelity_half);
    if (c.survival.kind == Crossing::Kind::crossed || c.survival.kind == Crossing::Kind::never_positive)
      std::printf("beyond the survival distance the link's state is separable: no local stage (tap, addition, "
                  "amplifier, scissors) can restore entanglement there\n");
  }
  return 0;
}

int cmd_example() {
  const auto text = scenario::demo_text();
  std::fwrite(text.data(), 1, text.size(), stdout);
  // The keys the demo does not use, as comments (the output stays a valid scenario).
  std::fputs(R"(
# ---- More keys (README "Scenario keys"; docs/hardware.md for the antenna stages) ----------
# Real antennas, in [link.antenna] (both ends) or [link.source_antenna] / [link.receiver_antenna]:
#   spillover_loss = 0.02            # power of the feed pattern that misses the reflector
#   spillover_temperature_k = 290.0  # what it sees instead (the roof, the sky near the horizon)
#   ohmic_loss_db = 0.1              # conductor loss of the feed ...
#   physical_temperature_k = 300.0   # ... at this temperature
#   return_loss_db = 20.0            # mismatch at the feed ...
#   mismatch_temperature_k = 0.05    # ... reflected from this side
# Each stage is a beam splitter with a thermal port at its temperature: at 290 K a spillover of
# a few percent adds tens of photons and breaks one-way entanglement at any distance.
# A source as measured, in [source] instead of squeezing_db / thermal_photons:
#   measured_squeezing_db = 5.2      # EPR variance below vacuum, dB
#   measured_antisqueezing_db = 7.9  # EPR variance above vacuum, dB
# or a whole covariance matrix, [source.covariance] matrix = [[...], ...], vacuum_variance = 1.
# A nondegenerate source: frequency_a_ghz = 5.2 and frequency_b_ghz = 5.6 in [source].
# A measured link without a distance axis: [link.direct] with a = { transmissivity = 0.9,
#   bath_photons = 0.01 } and b = { transmissivity = 0.6, added_photons = 0.3 }.
# Sweepable keys (a list or { from, to, points } adds an axis): README "Sweepable keys".
)",
             stdout);
  return 0;
}

int cmd_check(const std::string& path) {
  const scenario::Scenario sc = scenario::load(path);
  const auto& grid = sc.link.distances_m;
  std::printf("%s: valid scenario \"%s\"\n", sc.path.c_str(), sc.title.c_str());
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

  // The checks run makes before any work (the same function: check and run agree), and the
  // cutoff the bare link's state needs at each distance (Gaussian estimate; heralded states
  // have heavier tails and need more, which the run finds itself).
  const Preflight pf = preflight(sc);
  const point::Numerics numerics = sweep::numerics_of(sc);
  const double tol = numerics.tolerance;
  const int max_cutoff = sc.numerics.max_cutoff;
  auto cutoff_text = [&](int n) { return n > max_cutoff ? "more than " + std::to_string(max_cutoff) : std::to_string(n); };
  const std::string range = pf.cutoff_lo == pf.cutoff_hi ? cutoff_text(pf.cutoff_hi)
                                                        : cutoff_text(pf.cutoff_lo) + ".." + cutoff_text(pf.cutoff_hi);
  const std::string surveyed =
      pf.survey_distances < grid.size() ? " (at " + std::to_string(pf.survey_distances) + " of the distances)" : "";
  if (pf.separable_distances > 0)
    std::printf("  %zu of %zu distances%s are separable: exact results there (E_N = 0; P from the photon-number or "
                "Gaussian-sum path), no Fock state\n",
                pf.separable_distances, pf.survey_distances, pf.survey_distances < grid.size() ? " surveyed" : "");
  const bool all_separable = pf.separable_distances == pf.survey_distances;
  if (all_separable) {
    // Nothing to report on cutoffs: no point builds a Fock state of the bare link.
  } else if (sc.numerics.cutoff > 0) {
    std::printf("  cutoff: fixed at %d (the bare link needs %s for tolerance %.3g%s)\n", sc.numerics.cutoff,
                range.c_str(), tol, surveyed.c_str());
  } else {
    std::printf("  cutoff: auto; the bare link needs %s for tolerance %.3g (largest at %.4g m, %s per state)%s;\n"
                "          heralded states need more; the run stops at max_cutoff = %d\n",
                range.c_str(), tol, pf.cutoff_at_m,
                mebibytes(fock::memory_bytes_for(numerics.engine, std::min(pf.cutoff_hi, max_cutoff))).c_str(),
                surveyed.c_str(), max_cutoff);
    if (pf.cutoff_hi > max_cutoff)
      std::printf("  warning: near %.4g m the bare link needs a cutoff above max_cutoff = %d: those points keep their "
                  "figures flagged as missing the tolerance, exit code 3 (raise numerics.max_cutoff, loosen "
                  "numerics.tolerance, or move the distance axis)\n",
                  pf.cutoff_at_m, max_cutoff);
  }
  for (const std::string& w : pf.warnings) std::printf("  warning: %s\n", w.c_str());
  // The run time: the cost model calibrated by timing a few points (about 0.3 s here).
  const run::Estimate est = run::estimate(sc, 0.3);
  const int threads = sweep::thread_count(sc.numerics.threads);
  if (est.timed_points == 0) {
    std::printf("  estimate: not available (no point of the grid could be evaluated for the timing)\n");
    return 0;
  }
  std::printf("  estimate: %.4g CPU-seconds (%s) on one thread: sweep %.4g s, verdict about %.4g s;\n"
              "            about %s on %d thread%s, %s on 8, %s on 32\n"
              "            (cost model ~cutoff^3.5 per step, calibrated by timing %zu points in %.2f s on this machine)\n",
              est.cpu_seconds(), duration_text(est.cpu_seconds()).c_str(), est.sweep_cpu_seconds, est.verdict_cpu_seconds,
              duration_text(est.seconds(threads)).c_str(), threads, threads == 1 ? "" : "s",
              duration_text(est.seconds(8)).c_str(), duration_text(est.seconds(32)).c_str(), est.timed_points,
              est.timing_seconds);
  return 0;
}

}  // namespace heraldry::cli
