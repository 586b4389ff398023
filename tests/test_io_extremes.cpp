// Extreme but legal scenarios through the command line: refused before any work when the
// states would not fit in the memory allowed (naming cutoff and memory), or computed with
// figures that follow closed forms.
#include <doctest/doctest.h>

#include "tool_runner.hpp"

#include <sys/wait.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>

namespace fs = std::filesystem;
using heraldry::testing::Outcome;
using heraldry::testing::run_tool;

namespace {

fs::path scratch(const std::string& name) {
  const fs::path dir = fs::temp_directory_path() / ("heraldry_io_extremes_" + name);
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// An invented scenario: a short cryogenic line, one subtraction protocol; `counter` and
// `numerics` are the bodies of [counters.lab] and [numerics].
std::string write_scenario(const fs::path& dir, const std::string& counter, const std::string& numerics,
                           const std::string& squeezing_db = "4.0") {
  const fs::path file = dir / "scenario.toml";
  std::ofstream(file) << "title = \"extreme\"\n[source]\nfrequency_ghz = 6.0\nsqueezing_db = " << squeezing_db
                      << "\nbandwidth_mhz = 10.0\n[link]\nmedium = \"line\"\ndistance_m = [5.0, 10.0]\n"
                         "[link.line]\nloss_db_per_m = 0.05\ntemperature_k = 0.05\n[counters.lab]\n"
                      << counter
                      << "\n[[protocol]]\nname = \"tap b\"\n"
                         "steps = [\"link\", { tap = \"b\", transmissivity = 0.9, counter = \"lab\" }]\n"
                         "[numerics]\n"
                      << numerics << "\n";
  return file.string();
}

const std::string plain_counter = "kind = \"threshold\"\nefficiency = 0.6\ndark_per_gate = 1e-3";

}  // namespace

TEST_CASE("run refuses before any work an auto cutoff whose states exceed max_memory_mb, naming cutoff and memory") {
  const fs::path dir = scratch("memory_auto");
  const std::string sc = write_scenario(dir, plain_counter, "max_memory_mb = 0.01");
  const Outcome o = run_tool("run \"" + sc + "\" -o \"" + (dir / "r.h5").string() + "\"");
  CAPTURE(o.output);
  CHECK(o.code == 2);
  CHECK(o.output.find("key 'numerics.max_memory_mb' = 0.010000") != std::string::npos);
  CHECK(o.output.find("needs cutoff") != std::string::npos);
  CHECK(o.output.find("MiB per state") != std::string::npos);
  CHECK(o.output.find("heraldry run:") == std::string::npos);  // refused before the run started
  CHECK_FALSE(fs::exists(dir / "r.h5"));
  CHECK_FALSE(fs::exists(dir / "r.h5.partial"));
}

TEST_CASE("run refuses before any work a fixed dense cutoff whose state exceeds max_memory_mb") {
  // Memory of a dense state, 8 (N+1)^4 bytes (closed form: (N+1)^2 x (N+1)^2 doubles):
  // 8 x 401^4 B = 2.0686e11 B = 197,273 MiB (2^20 B) for N = 400.
  const fs::path dir = scratch("memory_fixed");
  const std::string sc = write_scenario(dir, plain_counter, "engine = \"dense\"\ncutoff = 400");
  const Outcome o = run_tool("run \"" + sc + "\" -o \"" + (dir / "r.h5").string() + "\"");
  CAPTURE(o.output);
  CHECK(o.code == 2);
  CHECK(o.output.find("cutoff 400 needs 1.973e+05 MiB per state") != std::string::npos);
  CHECK_FALSE(fs::exists(dir / "r.h5"));
}

TEST_CASE("a dark rate so high that the dark-click probability rounds to 1 heralds every trial: P = 1") {
  // Closed form: p = 1 - exp(-R t) = 1 in double precision for R t = 1e6; a threshold counter
  // then clicks on every gate, so the success probability is 1.
  const fs::path dir = scratch("dark_one");
  const std::string sc = write_scenario(dir, "kind = \"threshold\"\nefficiency = 0.6\ndark_rate_hz = 1e12\ngate_ns = 1000", "");
  const Outcome o = run_tool("probe \"" + sc + "\" --json");
  CAPTURE(o.output);
  REQUIRE(o.code == 0);
  CHECK(o.output.find("\"status\": \"ok\"") != std::string::npos);
  CHECK(o.output.find("\"success_probability\": 1,") != std::string::npos);
}

TEST_CASE("a 20 dB source whose states need more than max_cutoff runs and flags its points with exit code 3") {
  // 20 dB: the bare link needs a cutoff far above max_cutoff = 12 (TMSV closed form, see
  // test_core_extremes.cpp); the points are computed at 12 and flagged, never NaN.
  const fs::path dir = scratch("squeezing_20db");
  const std::string sc = write_scenario(dir, plain_counter, "max_cutoff = 12\ntolerance = 1e-3", "20.0");
  const Outcome o = run_tool("run \"" + sc + "\" -o \"" + (dir / "r.h5").string() + "\" --threads 1");
  CAPTURE(o.output);
  CHECK(o.code == 3);
  CHECK(o.output.find("truncation budget missed") != std::string::npos);
  CHECK(o.output.find("nan") == std::string::npos);
  CHECK(fs::exists(dir / "r.h5"));
}
