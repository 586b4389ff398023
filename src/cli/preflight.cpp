// Checks made before any work: the result file can be written where asked (run), and, shared by
// check and run so that they agree, the grid's size and the states the auto cutoff will use fit
// in the memory allowed; each phase bounded in time by max_cutoff.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <string>

#include "cli/commands.hpp"
#include "io/safe_file.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/point.hpp"
#include "heraldry/sweep.hpp"

namespace heraldry::cli {

void preflight_output(const scenario::Scenario& sc, const std::string& file) {
  namespace fs = std::filesystem;
  const fs::path target(file);
  const std::string value = "\"" + file + "\"";
  std::error_code ec;
  if (fs::is_directory(target, ec))
    throw InputError(sc.path, 0, "output.file", value, "a file name, not a folder", "give a file name inside it");
  const fs::path folder = target.has_parent_path() ? target.parent_path() : fs::path(".");
  fs::create_directories(folder, ec);
  if (!fs::is_directory(folder)) {
    // A path component that is a file, a missing drive, no permission: refused before any work.
    throw InputError(sc.path, 0, "output.file", value, "a file in a folder that exists or can be created",
                     "cannot create folder " + folder.string() + (ec ? ": " + ec.message() : std::string()));
  }
  std::string why;
  if (!output::detail::folder_writable(folder.string(), &why))
    throw InputError(sc.path, 0, "output.file", value, "a file in a folder this run can write",
                     "cannot create a file in " + folder.string() + ": " + why);
}

namespace {

// The cutoff the bare link's state needs for `tol2`, or max_cutoff + 1 when it needs more than
// max_cutoff (the run stops there). Bounded in time: one trace deficit at max_cutoff, then the
// bisection below it (auto_cutoff_gaussian with the memory of max_cutoff as its bound, so its
// early exit fires for hopeless states instead of evaluating a deficit at millions of photons).
int bounded_cutoff(const gaussian::StandardForm& s, double tol2, fock::Engine engine, int max_cutoff) {
  const double q = std::max({0.0, (s.a - 1.0) / (s.a + 1.0), (s.b - 1.0) / (s.b + 1.0)});
  if (q == 0.0) return 0;
  // Marginal lower bound of the deficit, max(q_A, q_B)^{N+1} (docs of auto_cutoff_gaussian).
  if (std::pow(q, max_cutoff + 1.0) >= tol2) return max_cutoff + 1;
  if (fock::gaussian_trace_deficit(s, max_cutoff) >= tol2) return max_cutoff + 1;
  try {
    return std::min(max_cutoff, fock::auto_cutoff_gaussian(s, tol2, engine, 1.01 * fock::memory_bytes_for(engine, max_cutoff)));
  } catch (const fock::CutoffError&) {
    return max_cutoff + 1;
  }
}

// Above this many points a scenario is warned about (the checkpoint size and the count).
constexpr std::size_t warn_points = 100000;

}  // namespace

Preflight preflight(const scenario::Scenario& sc) {
  Preflight out;
  // Grid size: parse refused grids above numerics.max_points; large ones are warned about.
  const sweep::Plan plan = sweep::make_plan(sc);
  out.points = plan.total_points();
  out.checkpoint_bytes = static_cast<double>(out.points) * (8.0 * static_cast<double>(point::result_fields().size()) + 1.0);
  if (out.points > warn_points)
    out.warnings.push_back("a large grid: " + std::to_string(out.points) + " points in all; the checkpoint holds about " +
                           mebibytes(out.checkpoint_bytes) + " and is rewritten as the run goes");

  // Every value of a swept source or link setting reaches the link model the kernels check: a
  // value they refuse is named by the setting's own key (not the kernel's field) before any work.
  for (const scenario::SweptSetting& st : sc.settings) {
    if (!st.counter.empty()) continue;
    for (double v : st.values) {
      scenario::Source src = sc.source;
      link::LinkModel model = sc.link.model;
      scenario::Counter none;
      st.apply(src, model, none, v);
      try {
        (void)point::bare_state(sweep::source_of(src), model, sc.link.distances_m.front());
      } catch (const InputError& e) {
        char value[32];
        std::snprintf(value, sizeof value, "%.10g", v);
        throw InputError(sc.path, 0, st.name, value, e.expected(),
                         "at this value of the swept setting" + (e.hint().empty() ? std::string() : "; " + e.hint()));
      }
    }
  }

  // Memory: the auto cutoff never exceeds max_cutoff; a state at the cutoff the bare link needs
  // (bounded by max_cutoff) that does not fit in max_memory_mb would otherwise be cut down
  // silently to the memory limit at every point. Heralded states need more than the bare link:
  // this is a lower bound on what the run needs, so it refuses only scenarios that cannot succeed.
  const point::Numerics numerics = sweep::numerics_of(sc);
  const fock::Engine engine = numerics.engine;
  const double max_bytes = numerics.max_memory_bytes;
  const std::string limit = std::to_string(sc.numerics.max_memory_mb);
  if (sc.numerics.cutoff > 0) {
    const double bytes = fock::memory_bytes_for(engine, sc.numerics.cutoff);
    if (bytes > max_bytes)
      throw InputError(sc.path, 0, "numerics.max_memory_mb", limit, "room for the fixed cutoff's states",
                       "cutoff " + std::to_string(sc.numerics.cutoff) + " needs " + mebibytes(bytes) + " per state");
  }
  const double tol2 = sc.numerics.tolerance * sc.numerics.tolerance;
  const int max_cutoff = sc.numerics.max_cutoff;
  const point::Source source = sweep::source_of(sc);
  const std::vector<double>& grid = sc.link.distances_m;
  // The cutoff survey (what check reports) looks at up to 512 distances spread over the axis;
  // the memory check below looks at every one (cheaply: it is needed only when the states at
  // max_cutoff do not fit).
  const std::size_t survey = std::min<std::size_t>(grid.size(), 512);
  for (std::size_t k = 0; k < survey; ++k) {
    const std::size_t i = survey == 1 ? 0 : k * (grid.size() - 1) / (survey - 1);
    const double d = grid[i];
    const gaussian::StandardForm bare = point::bare_state(source, sc.link.model, d);
    // A separable bare link: heralded steps on it take the exact paths, no Fock state.
    if (gaussian::smallest_pt_symplectic(bare) >= 1.0 - 1e-13) {
      ++out.separable_distances;
      continue;
    }
    const int n = bounded_cutoff(bare, tol2, engine, max_cutoff);
    if (out.cutoff_hi == 0 || n < out.cutoff_lo) out.cutoff_lo = n;
    if (out.cutoff_hi == 0 || n > out.cutoff_hi) {
      out.cutoff_hi = n;
      out.cutoff_at_m = d;
    }
  }
  out.survey_distances = survey;
  if (sc.numerics.cutoff > 0 || fock::memory_bytes_for(engine, max_cutoff) <= max_bytes) return out;
  // The largest cutoff whose states fit; a distance whose bare link needs more is refused.
  int fit = max_cutoff;
  while (fit > 0 && fock::memory_bytes_for(engine, fit) > max_bytes) --fit;
  for (double d : grid) {
    const gaussian::StandardForm s = point::bare_state(source, sc.link.model, d);
    if (gaussian::smallest_pt_symplectic(s) >= 1.0 - 1e-13) continue;  // no Fock state built there
    const double qa = std::max(0.0, (s.a - 1.0) / (s.a + 1.0)), qb = std::max(0.0, (s.b - 1.0) / (s.b + 1.0));
    // Marginal bounds max(q_A, q_B)^{N+1} <= deficit(N) <= q_A^{N+1} + q_B^{N+1} decide most
    // distances without the deficit itself.
    if (std::pow(qa, fit + 1.0) + std::pow(qb, fit + 1.0) < tol2) continue;
    if (std::pow(std::max(qa, qb), fit + 1.0) < tol2 && fit > 0 && fock::gaussian_trace_deficit(s, fit) < tol2) continue;
    const int needed = bounded_cutoff(s, tol2, engine, max_cutoff);
    const int shown = std::min(needed, max_cutoff);
    char where[64];
    std::snprintf(where, sizeof where, "%.4g m", d);
    throw InputError(sc.path, 0, "numerics.max_memory_mb", limit, "room for the states the run needs",
                     "the bare link at " + std::string(where) + " needs cutoff " + (needed > max_cutoff ? "above " : "") +
                         std::to_string(shown) + ", " + mebibytes(fock::memory_bytes_for(engine, shown)) +
                         " per state; raise max_memory_mb, or lower max_cutoff or the tolerance");
  }
  return out;
}

}  // namespace heraldry::cli
