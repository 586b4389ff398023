// Checks `heraldry run` makes before any work: the result file can be written where asked, and
// the states the auto cutoff will use fit in the memory allowed.
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <string>

#include "cli/commands.hpp"
#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"

namespace heraldry::cli {

namespace {

std::string megabytes(double bytes) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4g MB", bytes / 1048576.0);
  return buf;
}

}  // namespace

void preflight_output(const scenario::Scenario& sc, const std::string& file) {
  namespace fs = std::filesystem;
  const fs::path target(file);
  if (!target.has_parent_path()) return;
  const fs::path folder = target.parent_path();
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (!fs::is_directory(folder)) {
    // A path component that is a file, a missing drive, no permission: refused before any work.
    throw InputError(sc.path, 0, "output.file", "\"" + file + "\"", "a file in a folder that exists or can be created",
                     "cannot create folder " + folder.string() + (ec ? ": " + ec.message() : std::string()));
  }
}

void preflight_memory(const scenario::Scenario& sc) {
  // The auto cutoff never exceeds max_cutoff; a state at the cutoff the bare link needs (bounded
  // by max_cutoff) that does not fit in max_memory_mb would otherwise be cut down silently to
  // the memory limit at every point. Heralded states need more than the bare link: this is a
  // lower bound on what the run needs, so it refuses only scenarios that cannot succeed.
  const auto engine = sc.numerics.engine == scenario::EngineKind::dense ? fock::Engine::dense : fock::Engine::sector;
  const double max_bytes = sc.numerics.max_memory_mb * 1024.0 * 1024.0;
  const std::string limit = std::to_string(sc.numerics.max_memory_mb);
  if (sc.numerics.cutoff > 0) {
    const double bytes = fock::memory_bytes_for(engine, sc.numerics.cutoff);
    if (bytes > max_bytes)
      throw InputError(sc.path, 0, "numerics.max_memory_mb", limit, "room for the fixed cutoff's states",
                       "cutoff " + std::to_string(sc.numerics.cutoff) + " needs " + megabytes(bytes) + " per state");
    return;
  }
  const double tol = sc.numerics.tolerance;
  const double r = squeezing_parameter_from_db(sc.source.squeezing_db);
  for (double d : sc.link.distances_m) {
    const link::LinkBudget b = link::link_budget(sc.link.model, d);
    auto s = gaussian::tmst(r, sc.source.thermal_photons);
    s = gaussian::apply(gaussian::apply(s, Mode::A, b.a.channel), Mode::B, b.b.channel);
    int needed = sc.numerics.max_cutoff;
    try {
      needed = std::min(needed, fock::auto_cutoff_gaussian(s, tol * tol, engine, 1e300));
    } catch (const fock::CutoffError& e) {
      needed = std::min(needed, e.needed_cutoff());
    }
    const double bytes = fock::memory_bytes_for(engine, needed);
    if (bytes > max_bytes) {
      char where[64];
      std::snprintf(where, sizeof where, "%.4g m", d);
      throw InputError(sc.path, 0, "numerics.max_memory_mb", limit, "room for the states the run needs",
                       "the bare link at " + std::string(where) + " needs cutoff " + std::to_string(needed) + ", " +
                           megabytes(bytes) + " per state; raise max_memory_mb, or lower max_cutoff or the tolerance");
    }
  }
}

}  // namespace heraldry::cli
