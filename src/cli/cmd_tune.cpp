// `heraldry tune SCENARIO --protocol NAME --objective OBJ [--at METRES] [--min-rate-hz X]
// [--max-false-herald-fraction F] [--json]`: the optimum of a protocol's `{ tune = [lo, hi] }`
// parameters at one distance, its figures, the bare link there, and the sensitivity at +-5 %.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <string>

#include "cli/commands.hpp"
#include "cli/json.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/tune.hpp"

namespace heraldry::cli {

namespace {

// "0.0123 (-1.2 %)" or "infeasible": the objective at a neighbour and its drop from the optimum.
std::string drop_text(double objective, double best) {
  if (!std::isfinite(objective)) return "infeasible";
  char buf[64];
  const double drop = best - objective;
  if (best != 0.0)
    std::snprintf(buf, sizeof buf, "%.6g (%.3g %%)", drop, 100.0 * drop / std::abs(best));
  else
    std::snprintf(buf, sizeof buf, "%.6g", drop);
  return buf;
}

std::string json_output(const tune::Result& r) {
  const auto& f = r.at_best;
  std::string out = "{\"protocol\": " + json_string(r.protocol) + ", \"objective\": " +
                    json_string(tune::to_string(r.objective)) + ", \"objective_units\": " +
                    json_string(tune::units(r.objective)) + ", \"distance_m\": " + json_number(r.distance_m) +
                    ", \"feasible\": " + (r.feasible ? "true" : "false") +
                    ", \"evaluations\": " + std::to_string(r.evaluations) + ", \"optimum\": " +
                    (r.feasible ? json_number(f.objective) : "null") + ", \"parameters\": [";
  for (std::size_t i = 0; i < r.knobs.size(); ++i) {
    const auto& k = r.knobs[i];
    out += std::string(i ? ", " : "") + "{\"name\": " + json_string(k.name) + ", \"units\": " + json_string(k.units) +
           ", \"lo\": " + json_number(k.lo) + ", \"hi\": " + json_number(k.hi) +
           ", \"value\": " + (r.feasible ? json_number(r.best[i]) : "null");
    if (r.feasible) {
      const auto& s = r.sensitivity[i];
      out += ", \"minus_5_percent\": {\"value\": " + json_number(s.minus_value) + ", \"objective\": " +
             json_number(s.minus_objective) + "}, \"plus_5_percent\": {\"value\": " + json_number(s.plus_value) +
             ", \"objective\": " + json_number(s.plus_objective) + "}";
    }
    out += "}";
  }
  out += "], \"figures\": ";
  if (r.feasible)
    out += "{" + json_fields(f) + "}";
  else
    out += "null";
  out += ", \"bare\": {\"log_negativity\": " + json_number(r.bare_log_negativity) + ", \"fidelity\": " +
         json_number(r.bare_fidelity) + "}}\n";
  return out;
}

void text_output(const scenario::Scenario& sc, const tune::Result& r) {
  std::printf("# %s\n", sc.title.c_str());
  std::printf("# tuning '%s' for %s (%s) at %.6g m: %zu evaluations\n", r.protocol.c_str(),
              tune::to_string(r.objective), tune::units(r.objective), r.distance_m, r.evaluations);
  if (!r.feasible) {
    std::printf("no setting in the ranges meets the constraints with the figures within budget\n");
    return;
  }
  const auto& f = r.at_best;
  const std::string u = tune::units(r.objective);
  std::printf("optimum: %s = %.6g%s\n", tune::to_string(r.objective), f.objective, u == "1" ? "" : (" " + u).c_str());
  for (std::size_t i = 0; i < r.knobs.size(); ++i) {
    const auto& k = r.knobs[i];
    // An optimum at an end of its range may lie beyond it: say so.
    const char* end = r.best[i] == k.lo ? "  <- lower end of the range" : r.best[i] == k.hi ? "  <- upper end of the range" : "";
    std::printf("  %-26s = %-12.6g %-3s  range [%g, %g]  (%s)%s\n", k.name.c_str(), r.best[i],
                k.units == "1" ? "" : k.units.c_str(), k.lo, k.hi, k.description.c_str(), end);
  }
  std::printf("there: P_success %.6g, rate %.6g Hz, false heralds %.3f %%, E_N %.6f ebit, F %.6f, cutoff %d, "
              "truncation error %.2e\n",
              f.success_probability, f.heralding_rate_hz, 100.0 * f.false_herald_fraction, f.log_negativity,
              f.fidelity, f.cutoff, f.truncation_error);
  std::printf("bare link there (Gaussian, same source): E_N %.6f ebit, F %.6f\n", r.bare_log_negativity,
              r.bare_fidelity);
  std::printf("sensitivity (objective drop when one parameter moves by -5 %% / +5 %%, clamped to its range):\n");
  std::printf("  %-26s %12s  %-24s %12s  %-24s\n", "parameter", "at -5%", "drop", "at +5%", "drop");
  for (std::size_t i = 0; i < r.knobs.size(); ++i) {
    const auto& s = r.sensitivity[i];
    std::printf("  %-26s %12.6g  %-24s %12.6g  %-24s\n", r.knobs[i].name.c_str(), s.minus_value,
                drop_text(s.minus_objective, f.objective).c_str(), s.plus_value,
                drop_text(s.plus_objective, f.objective).c_str());
  }
}

}  // namespace

int cmd_tune(const TuneOptions& options) {
  const scenario::Scenario sc = scenario::load(options.scenario);
  tune::Options o;
  o.protocol = options.protocol;
  o.objective = tune::objective_from_string(options.objective);
  o.at_m = options.at_m;
  o.min_rate_hz = options.min_rate_hz;
  o.max_false_herald_fraction = options.max_false_herald_fraction;
  o.threads = sweep::thread_count(options.threads > 0 ? options.threads : sc.numerics.threads);
  o.exact_search = options.exact_search;
  // Progress on stderr: at most one line a second, with the estimate of what is left.
  auto last = std::chrono::steady_clock::now() - std::chrono::seconds(10);
  o.progress = [&](std::size_t done, std::size_t expected, double seconds) {
    const auto now = std::chrono::steady_clock::now();
    if (done < 3 || (now - last < std::chrono::seconds(1) && done < expected)) return;
    last = now;
    const double each = seconds / static_cast<double>(done);
    std::fprintf(stderr, "heraldry tune: %zu of about %zu evaluations, %.3g s each, about %.0f s left\n", done,
                 expected, each, each * static_cast<double>(expected > done ? expected - done : 0));
    std::fflush(stderr);
  };
  const tune::Result r = tune::run(sc, o);
  if (options.json)
    std::fputs(json_output(r).c_str(), stdout);
  else
    text_output(sc, r);
  return r.feasible ? 0 : 3;
}

}  // namespace heraldry::cli
