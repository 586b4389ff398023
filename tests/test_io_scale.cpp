// Scale and preflight: grids whose point count is absurd or overflows are refused before any
// work, naming the axes and their sizes; large ones are warned about with their checkpoint size;
// check and run make the same checks (one preflight) and agree; the preflight stays bounded in
// time on states that need millions of photons.
#include <doctest/doctest.h>

#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>

#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "tool_runner.hpp"

namespace fs = std::filesystem;
using namespace heraldry;
using heraldry::testing::Outcome;
using heraldry::testing::run_tool;

namespace {

fs::path scratch(const std::string& name) {
  const fs::path p = fs::temp_directory_path() / ("heraldry_scale_" + name + "_" + std::to_string(::getpid()));
  fs::remove_all(p);
  fs::create_directories(p);
  return p;
}

// A cold line with a tap whose transmissivity axis has `tap_points` values over `distance_points`
// distances, and `numerics` lines.
std::string line_scenario(int distance_points, int tap_points, const std::string& numerics = "") {
  return "title = \"scale test\"\n[source]\nfrequency_ghz = 5.0\nsqueezing_db = 3.0\nbandwidth_mhz = 1.0\n"
         "[link]\nmedium = \"line\"\ndistance_m = { from = 1, to = 100, points = " +
         std::to_string(distance_points) +
         " }\n[link.line]\nloss_db_per_m = 0.01\ntemperature_k = 0.05\n"
         "[counters.det]\nkind = \"threshold\"\nefficiency = 0.6\ndark_per_gate = 1e-3\n"
         "[[protocol]]\nname = \"tap b\"\nsteps = [\"link\", { tap = \"b\", transmissivity = { from = 0.5, to = 0.99, "
         "points = " +
         std::to_string(tap_points) + " }, counter = \"det\" }]\n[numerics]\ntolerance = 1e-6\n" + numerics;
}

fs::path write(const fs::path& dir, const std::string& name, const std::string& text) {
  const fs::path f = dir / name;
  std::ofstream(f) << text;
  return f;
}

}  // namespace

TEST_CASE("a grid above numerics.max_points is refused by check and by run with the same message, before any file") {
  const fs::path dir = scratch("refused");
  // 10^4 distances x 10^4 tap values = 10^8 points > the default 10^7.
  const fs::path sc = write(dir, "s.toml", line_scenario(10000, 10000));
  const Outcome check = run_tool("check \"" + sc.string() + "\"");
  const Outcome run = run_tool("run \"" + sc.string() + "\" -o \"" + (dir / "r.h5").string() + "\"");
  CAPTURE(check.output);
  CAPTURE(run.output);
  CHECK(check.code == 2);
  CHECK(run.code == 2);
  const std::string expected = "key 'protocol[0].name' = \"tap b\": expected a grid of at most numerics.max_points = "
                               "10000000 points (its grid has 100000000 points: distance_m 10000 x tap_b.transmissivity 10000";
  CHECK(check.output.find(expected) != std::string::npos);
  CHECK(run.output.find(expected) != std::string::npos);
  CHECK(run.output.find("heraldry run:") == std::string::npos);  // refused before the run started
  CHECK_FALSE(fs::exists(dir / "r.h5"));
  CHECK_FALSE(fs::exists(dir / "r.h5.partial"));
  fs::remove_all(dir);
}

TEST_CASE("raising numerics.max_points accepts the grid, and check warns with its point count and checkpoint size") {
  const fs::path dir = scratch("warned");
  const fs::path sc = write(dir, "s.toml", line_scenario(10000, 10000, "max_points = 100000000\n"));
  const Outcome check = run_tool("check \"" + sc.string() + "\"");
  CAPTURE(check.output);
  CHECK(check.code == 0);
  // Closed form of the estimate: 8 bytes per figure per point plus the done flag, 10^8 points.
  const double bytes = 1e8 * (8.0 * static_cast<double>(point::result_fields().size()) + 1.0);
  CHECK(check.output.find("warning: a large grid: 100000000 points in all; the checkpoint holds about " + mebibytes(bytes)) !=
        std::string::npos);
  CHECK(check.output.find("(at 512 of the distances)") != std::string::npos);
  fs::remove_all(dir);
}

TEST_CASE("the point count parse checks equals the plan's, axis by axis, on every shipped scenario") {
  // A limit one below a protocol's grid refuses it; the grid itself at the limit passes.
  std::size_t n = 0;
  for (const auto& e : fs::directory_iterator(std::string(HERALDRY_SOURCE_DIR) + "/protocols")) {
    if (e.path().extension() != ".toml") continue;
    std::ifstream in(e.path());
    const std::string text{std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
    const scenario::Scenario sc = scenario::parse(text, e.path().string());
    const sweep::Plan plan = sweep::make_plan(sc);
    std::size_t largest = 0;
    for (const auto& p : plan.protocols) largest = std::max(largest, p.size());
    if (largest < 2) continue;
    auto with_limit = [&](std::size_t limit) {
      std::string t = text;
      const std::string line = "max_points = " + std::to_string(limit) + "\n";
      const auto at = t.find("\n[numerics]\n");
      if (at == std::string::npos)
        t += "\n[numerics]\n" + line;
      else
        t.insert(at + 12, line);
      return t;
    };
    CAPTURE(e.path().string());
    CHECK_NOTHROW((void)scenario::parse(with_limit(largest), e.path().string()));
    std::string refused = "(no error)";
    try {
      (void)scenario::parse(with_limit(largest - 1), e.path().string());
    } catch (const InputError& err) {
      refused = err.what();
    }
    CHECK(refused.find("its grid has " + std::to_string(largest) + " points") != std::string::npos);
    ++n;
  }
  CHECK(n >= 3);
}

TEST_CASE("a measured channel with a 10^6-photon bath: separable, exact, neither check nor run stalls") {
  // A Fock state would need ~2.3e7 photons per mode (thermal tail q^(N+1) of the 1e6-photon
  // environment, closed form), which took hours before; the channel breaks entanglement
  // ((1 - tau) n_E >= tau, Holevo 2008), so check says so and run computes the exact figures.
  const fs::path dir = scratch("hot_bath");
  const fs::path sc = write(dir, "s.toml",
                            "title = \"hot bath\"\n[source]\nfrequency_ghz = 5.0\nsqueezing_db = 6.0\nbandwidth_mhz = 1.0\n"
                            "[link.direct]\na = { transmissivity = 0.9, bath_photons = 0.0 }\n"
                            "b = { transmissivity = 0.5, bath_photons = 1e6 }\n[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n");
  const Outcome check = run_tool("check \"" + sc.string() + "\"");
  CAPTURE(check.output);
  CHECK(check.code == 0);
  CHECK(check.output.find("1 of 1 distances are separable") != std::string::npos);
  const Outcome run = run_tool("run \"" + sc.string() + "\" -o \"" + (dir / "r.h5").string() + "\" --threads 1");
  CAPTURE(run.output);
  CHECK(run.code == 0);
  CHECK(fs::exists(dir / "r.h5"));
  fs::remove_all(dir);
}

TEST_CASE("check and run agree on a memory limit the bare link's states cannot fit") {
  // max_memory_mb = 0.005 (5243 bytes): a sector state at cutoff N takes
  // 8 [(N+1)^2 + N(N+1)(2N+1)/3] bytes (closed form of the block sizes), above the limit from
  // N = 9; 3 dB at tolerance 1e-6 needs N >= 12 (TMSV tail lambda^(2(N+1)) < 1e-12, lambda = tanh r).
  const fs::path dir = scratch("memory");
  const fs::path sc = write(dir, "s.toml", line_scenario(5, 2, "max_memory_mb = 0.005\n"));
  const Outcome check = run_tool("check \"" + sc.string() + "\"");
  const Outcome run = run_tool("run \"" + sc.string() + "\" -o \"" + (dir / "r.h5").string() + "\"");
  CAPTURE(check.output);
  CAPTURE(run.output);
  CHECK(check.code == 2);
  CHECK(run.code == 2);
  const std::string expected = "key 'numerics.max_memory_mb' = 0.005000: expected room for the states the run needs";
  CHECK(check.output.find(expected) != std::string::npos);
  CHECK(run.output.find(expected) != std::string::npos);
  CHECK_FALSE(fs::exists(dir / "r.h5"));
  fs::remove_all(dir);
}

TEST_CASE("absurd thread counts are bounded: 2147483647 in the scenario or on the command line is refused, in OMP_NUM_THREADS held to 1024") {
  const fs::path dir = scratch("threads");
  const fs::path sc = write(dir, "s.toml", line_scenario(2, 2));
  const fs::path absurd = write(dir, "t.toml", line_scenario(2, 2, "threads = 2147483647\n"));
  const Outcome in_file = run_tool("check \"" + absurd.string() + "\"");
  CHECK(in_file.code == 2);
  CHECK(in_file.output.find("key 'numerics.threads' = 2147483647: expected an integer in [0, 1024]") != std::string::npos);
  const Outcome on_line = run_tool("run \"" + sc.string() + "\" -o \"" + (dir / "a.h5").string() + "\" --threads 2147483647");
  CHECK(on_line.code == 2);
  CHECK_FALSE(fs::exists(dir / "a.h5"));
  // libgomp alone would try to allocate a pool of 2^31 threads (481 GB) and end the process.
  const Outcome env = testing::run_tool_env("OMP_NUM_THREADS=2147483647 ",
                                            "run \"" + sc.string() + "\" -o \"" + (dir / "b.h5").string() + "\"");
  CAPTURE(env.output);
  CHECK(env.code == 0);
  CHECK(fs::exists(dir / "b.h5"));
  fs::remove_all(dir);
}
