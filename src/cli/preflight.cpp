// Checks `heraldry run` makes before any work: the result file can be written where asked, and
// the states the auto cutoff will use fit in the memory allowed.
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <string>

#include "cli/commands.hpp"
#include "io/safe_file.hpp"
#include "heraldry/fock.hpp"
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

void preflight_memory(const scenario::Scenario& sc) {
  // The auto cutoff never exceeds max_cutoff; a state at the cutoff the bare link needs (bounded
  // by max_cutoff) that does not fit in max_memory_mb would otherwise be cut down silently to
  // the memory limit at every point. Heralded states need more than the bare link: this is a
  // lower bound on what the run needs, so it refuses only scenarios that cannot succeed.
  const point::Numerics numerics = sweep::numerics_of(sc);
  const fock::Engine engine = numerics.engine;
  const double max_bytes = numerics.max_memory_bytes;
  const std::string limit = std::to_string(sc.numerics.max_memory_mb);
  if (sc.numerics.cutoff > 0) {
    const double bytes = fock::memory_bytes_for(engine, sc.numerics.cutoff);
    if (bytes > max_bytes)
      throw InputError(sc.path, 0, "numerics.max_memory_mb", limit, "room for the fixed cutoff's states",
                       "cutoff " + std::to_string(sc.numerics.cutoff) + " needs " + mebibytes(bytes) + " per state");
    return;
  }
  const point::Source source = sweep::source_of(sc);
  for (double d : sc.link.distances_m) {
    // Bounded search (max_cutoff); separable distances build no Fock state of the bare link.
    const std::optional<int> estimate = point::bare_cutoff_estimate(point::bare_state(source, sc.link.model, d), numerics);
    if (!estimate) continue;
    const int needed = std::min(*estimate, sc.numerics.max_cutoff);
    const double bytes = fock::memory_bytes_for(engine, needed);
    if (bytes > max_bytes) {
      char where[64];
      std::snprintf(where, sizeof where, "%.4g m", d);
      throw InputError(sc.path, 0, "numerics.max_memory_mb", limit, "room for the states the run needs",
                       "the bare link at " + std::string(where) + " needs cutoff " + std::to_string(needed) + ", " +
                           mebibytes(bytes) + " per state; raise max_memory_mb, or lower max_cutoff or the tolerance");
    }
  }
}

}  // namespace heraldry::cli
