// heraldry: command-line entry point. Parses arguments with CLI11 and dispatches to the commands;
// maps input errors to exit code 2.
#include <CLI/CLI.hpp>

#include <cstdio>
#include <exception>
#include <iostream>

#include "cli/commands.hpp"
#include "heraldry/common.hpp"
#include "heraldry/output.hpp"

int main(int argc, char** argv) {
  using namespace heraldry;
  CLI::App app{"heraldry: does a heralded distillation stage pay off on my microwave link?"};
  app.set_version_flag("--version", std::string("heraldry ") + HERALDRY_VERSION);
  app.require_subcommand(1);

  std::string scenario;
  auto* example = app.add_subcommand("example", "print the demo scenario, to copy and edit");
  auto* check = app.add_subcommand("check", "validate a scenario and report the cutoff it needs");
  check->add_option("scenario", scenario, "scenario file (TOML), or - for standard input")->required();
  auto* link = app.add_subcommand("link", "link budget and Gaussian figures versus distance");
  link->add_option("scenario", scenario, "scenario file (TOML), or - for standard input")->required();
  bool link_json = false;
  link->add_flag("--json", link_json, "print one JSON object: the table by column, the units and the crossings");

  cli::RunOptions run_opts;
  auto* run = app.add_subcommand("run", "the main job: sweep, HDF5 results, verdict (default: the built-in demo)");
  run->add_option("scenario", run_opts.scenario, "scenario file (TOML), or - for standard input; without it the built-in demo");
  run->add_option("-o,--output", run_opts.output, "result file (overrides [output] file)");
  run->add_option("-t,--threads", run_opts.threads, "threads (overrides [numerics] threads and OMP_NUM_THREADS)")
      ->check(CLI::Range(1, 1024));
  run->add_flag("--force", run_opts.force, "overwrite an existing result file");
  run->add_option("--stop-after", run_opts.stop_after, "stop after this many new points, keeping the checkpoint (testing)")
      ->group("");
  run->add_option("--checkpoint-seconds", run_opts.checkpoint_seconds, "checkpoint period in seconds (testing)")
      ->check(CLI::Range(0.0, 86400.0))
      ->group("");
  run->add_option("--progress-seconds", run_opts.progress_seconds,
                  "seconds between progress lines when stderr is not a terminal (a batch log)")
      ->check(CLI::Range(0.0, 86400.0));

  cli::ProbeOptions probe_opts;
  auto* probe = app.add_subcommand("probe", "every protocol's figures at one distance");
  probe->add_option("scenario", probe_opts.scenario, "scenario file (TOML), or - for standard input")->required();
  probe->add_option("--at", probe_opts.at_m, "distance in metres (default: the scenario's target_m)");
  probe->add_flag("--json", probe_opts.json, "print one JSON object");
  probe->add_option("--set", probe_opts.set, "pin a swept parameter: PROTOCOL:AXIS=VALUE (repeatable)");

  cli::TuneOptions tune_opts;
  auto* tune = app.add_subcommand("tune", "optimise a protocol's { tune = [lo, hi] } parameters at one distance");
  tune->add_option("scenario", tune_opts.scenario, "scenario file (TOML), or - for standard input")->required();
  tune->add_option("--protocol", tune_opts.protocol, "the protocol to tune (its name)")->required();
  tune->add_option("--objective", tune_opts.objective, "fidelity, log-negativity or rate (heralding rate x E_N)")
      ->required();
  tune->add_option("--at", tune_opts.at_m, "distance in metres (default: the scenario's target_m)");
  tune->add_option("--min-rate-hz", tune_opts.min_rate_hz, "only settings heralding at least this rate");
  tune->add_option("--max-false-herald-fraction", tune_opts.max_false_herald_fraction,
                   "only settings with at most this false-herald fraction");
  tune->add_option("-t,--threads", tune_opts.threads, "threads for independent evaluations")->check(CLI::Range(1, 1024));
  tune->add_flag("--json", tune_opts.json, "print one JSON object");
  tune->add_flag("--exact-search", tune_opts.exact_search, "every evaluation at the scenario's tolerance (benchmarks)")
      ->group("");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? 0 : 2;
  }

  try {
    if (*example) return cli::cmd_example();
    if (*check) return cli::cmd_check(scenario);
    if (*link) return cli::cmd_link(scenario, link_json);
    if (*probe) return cli::cmd_probe(probe_opts);
    if (*run) return cli::cmd_run(run_opts);
    if (*tune) return cli::cmd_tune(tune_opts);
  } catch (const InputError& e) {
    std::fprintf(stderr, "heraldry: error: %s\n", e.what());
    return 2;
  } catch (const output::WriteError& e) {
    std::fprintf(stderr, "heraldry: error: %s\n  (the file on disk is the previous one, intact; free space or choose another folder, then run the same command again)\n", e.what());
    return 4;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "heraldry: error: %s\n", e.what());
    return 1;
  }
  return 0;
}
