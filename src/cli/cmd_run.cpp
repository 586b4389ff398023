// `heraldry run [SCENARIO]`: the main job.
#include <csignal>
#include <cstdio>
#include <optional>
#include <unistd.h>

#include "cli/commands.hpp"
#include "heraldry/common.hpp"
#include "heraldry/ranks.hpp"
#include "heraldry/run.hpp"
#include "heraldry/scenario.hpp"

namespace heraldry::cli {

namespace {
extern "C" void on_signal(int) { run::request_stop(); }
}  // namespace

namespace {

int run_on_ranks(const RunOptions& options, ranks::Session& session);

}  // namespace

int cmd_run(const RunOptions& options) {
  // Started by an MPI launcher as several processes, a build without MPI would run the whole
  // sweep in each and write the same file: refused (every copy says so, none writes).
  if (!ranks::built_with_mpi() && ranks::launcher_ranks() > 1) {
    std::fprintf(stderr,
                 "heraldry: error: started as %d MPI ranks, but this heraldry was built without MPI: every rank would "
                 "run the whole sweep and write the same file.\n  Build it with MPI (cmake -DHERALDRY_WITH_MPI=ON; see "
                 "scripts/cluster/README.md), or run one process.\n",
                 ranks::launcher_ranks());
    return 2;
  }
  // MPI (in a build with HERALDRY_WITH_MPI) lives as long as this object; with one rank, or
  // without MPI, what follows is the plain single-process run.
  ranks::Session session;
  try {
    return run_on_ranks(options, session);
  } catch (const std::exception& e) {
    // Rank 0 leaves `execute` only after every other rank was released, so its errors end the
    // run as without MPI. An error that ends another rank outside its evaluations (a broken
    // exchange) leaves rank 0 waiting for it: that rank says what broke and ends the whole job.
    if (session.ranks().size > 1 && session.ranks().rank != 0) {
      std::fprintf(stderr, "heraldry: error on MPI rank %d: %s\n", session.ranks().rank, e.what());
      session.abort(70);
    }
    throw;
  }
}

namespace {

int run_on_ranks(const RunOptions& options, ranks::Session& session) {
  const bool coordinator = session.ranks().rank == 0;
  const std::optional<scenario::Scenario> shared = ranks::shared_scenario(
      [&] { return options.scenario.empty() ? scenario::demo() : scenario::load(options.scenario); });
  if (!shared) return 2;  // rank 0 could not read the scenario and says why
  const scenario::Scenario& sc = *shared;
  run::Options ro;
  ro.output = options.output;
  ro.threads = options.threads;
  ro.force = options.force;
  ro.stop_after_points = options.stop_after;
  ro.checkpoint_seconds = options.checkpoint_seconds;
  ro.progress = !coordinator ? run::Options::Progress::none
                : isatty(STDERR_FILENO) != 0 ? run::Options::Progress::terminal
                                            : run::Options::Progress::lines;
  ro.progress_seconds = options.progress_seconds;
  ro.version = HERALDRY_VERSION;
  std::signal(SIGINT, on_signal);
  std::signal(SIGTERM, on_signal);

  // Every rank checks (the same input gives the same refusal everywhere, so no rank waits for
  // another); only rank 0 says why.
  Preflight pf;
  try {
    preflight_output(sc, ro.output.empty() ? sc.output.file : ro.output);
    pf = preflight(sc);
  } catch (const InputError&) {
    if (coordinator) throw;
    return 2;
  }
  if (coordinator) {
    std::fprintf(stderr, "heraldry run: %s\n", sc.title.c_str());
    for (const std::string& w : pf.warnings) std::fprintf(stderr, "heraldry run: warning: %s\n", w.c_str());
  }
  const run::Summary s = run::execute(sc, ro);
  if (s.worker) return 0;  // rank 0 reports for the whole run
  if (s.interrupted) {
    std::fprintf(stderr,
                 "heraldry run: stopped after %zu new points (%zu of %zu done); checkpoint kept in %s\n"
                 "  run the same command again to resume\n",
                 s.computed_points, s.computed_points + s.resumed_points, s.total_points, s.file.c_str());
    return 130;
  }
  if (s.ranks > 1)
    std::fprintf(stderr,
                 "heraldry run: %zu points (%zu resumed) in %.2f s (verdict %.2f s) on %d ranks x %d threads, %.1f points/s -> %s\n",
                 s.total_points, s.resumed_points, s.seconds, s.verdict_seconds, s.ranks, s.threads,
                 s.computed_points / (s.seconds > 0 ? s.seconds : 1.0), s.file.c_str());
  else
    std::fprintf(stderr, "heraldry run: %zu points (%zu resumed) in %.2f s (verdict %.2f s) on %d threads, %.1f points/s -> %s\n",
                 s.total_points, s.resumed_points, s.seconds, s.verdict_seconds, s.threads,
                 s.computed_points / (s.seconds > 0 ? s.seconds : 1.0), s.file.c_str());
  const std::string text = format_verdict(sc, *s.data.verdict);
  std::fwrite(text.data(), 1, text.size(), stdout);
  return s.failed_points > 0 ? 3 : 0;
}

}  // namespace

}  // namespace heraldry::cli
