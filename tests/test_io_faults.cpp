// Faults around the result files: a full disk, planted symlinks, a corrupted checkpoint, two runs
// on one file, an output that is a folder or on a read-only file system. Each must lose nothing
// already written and say what happened.
#include <doctest/doctest.h>

#include <H5Cpp.h>
#include <sys/mount.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>

#include "heraldry/output.hpp"
#include "heraldry/run.hpp"
#include "heraldry/scenario.hpp"
#include "io/safe_file.hpp"
#include "tool_runner.hpp"

namespace fs = std::filesystem;
using namespace heraldry;

namespace {

fs::path scratch(const std::string& name) {
  const fs::path p = fs::temp_directory_path() / ("heraldry_faults_" + name + "_" + std::to_string(::getpid()));
  fs::remove_all(p);
  fs::create_directories(p);
  return p;
}

const char* small_scenario = R"(
title = "fault test: a cold line with one tap"
[source]
frequency_ghz = 5.0
squeezing_db = 3.0
thermal_photons = 0.01
bandwidth_mhz = 1.0
[link]
medium = "line"
distance_m = { from = 0, to = 100, points = 5 }
[link.line]
loss_db_per_m = 0.01
temperature_k = 0.05
[counters.det]
kind = "threshold"
efficiency = 0.6
dark_per_gate = 1e-3
[[protocol]]
name = "bare"
steps = ["link"]
[[protocol]]
name = "tap b"
steps = ["link", { tap = "b", transmissivity = [0.9, 0.95], counter = "det" }]
[numerics]
tolerance = 1e-6
)";

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

bool any_temporary_left(const fs::path& dir) {
  for (const auto& e : fs::directory_iterator(dir))
    if (e.path().filename().string().find(".tmp") != std::string::npos) return true;
  return false;
}

// Opens the file and reads the root attribute `complete` (the file is whole if HDF5 opens it).
long long completeness(const fs::path& p) {
  H5::H5File f(p.string(), H5F_ACC_RDONLY);
  long long c = -1;
  f.openGroup("/").openAttribute("complete").read(H5::PredType::NATIVE_LLONG, &c);
  return c;
}

}  // namespace

TEST_CASE("a write that fails for lack of space leaves the previous file intact, no temporary behind, and says why") {
  const fs::path dir = scratch("nospace");
  const std::string target = (dir / "r.h5").string();
  output::detail::write_atomically(target, "old contents");
  output::detail::fail_write_after(1);
  try {
    output::detail::write_atomically(target, std::string(100000, 'x'));
    FAIL("the write should have failed");
  } catch (const output::WriteError& e) {
    CHECK(std::string(e.what()).find("No space left on device") != std::string::npos);
    CHECK(std::string(e.what()).find(target) != std::string::npos);
  }
  output::detail::fail_write_after(0);
  CHECK(slurp(target) == "old contents");
  CHECK_FALSE(any_temporary_left(dir));
  fs::remove_all(dir);
}

TEST_CASE("a run on a full disk ends with exit code 4 and its message, keeps no broken file and never crashes") {
  // A 96 KB tmpfs (root can mount one here); without it, the write hook fails the first write.
  const fs::path dir = scratch("fulldisk");
  const fs::path mnt = dir / "small";
  fs::create_directories(mnt);
  const bool mounted = ::mount("tmpfs", mnt.c_str(), "tmpfs", 0, "size=96k") == 0;
  const fs::path scenario_file = dir / "big.toml";
  std::string text = small_scenario;
  text.replace(text.find("points = 5"), 10, "points = 400");
  std::ofstream(scenario_file) << text;
  const std::string env = mounted ? "" : "HERALDRY_TEST_FAIL_WRITE=1 ";
  if (mounted)
    MESSAGE("a 96 KB tmpfs holds the output");
  else
    MESSAGE("no tmpfs: the write hook fails the first write");
  const testing::Outcome o = testing::run_tool_env(env, "run \"" + scenario_file.string() + "\" -o \"" +
                                                            (mnt / "r.h5").string() + "\" -t 2");
  CAPTURE(o.output);
  CHECK(o.code == 4);
  CHECK(o.output.find("No space left on device") != std::string::npos);
  CHECK_FALSE(fs::exists(mnt / "r.h5"));
  CHECK_FALSE(any_temporary_left(mnt));
  if (mounted) ::umount(mnt.c_str());
  fs::remove_all(dir);
}

TEST_CASE("symlinks planted at temporary names are never written through") {
  const fs::path dir = scratch("symlink");
  const fs::path victim = dir / "precious.txt";
  std::ofstream(victim) << "keep me";
  for (const char* planted : {"r.h5.tmp", "r.h5.partial.tmp", "r.h5.partial"}) fs::create_symlink(victim, dir / planted);
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  // The planted "checkpoint" is a symlink to a text file: refused as unreadable, never resumed
  // or overwritten.
  CHECK_THROWS_AS(run::execute(sc, opt), InputError);
  fs::remove(dir / "r.h5.partial");
  const run::Summary s = run::execute(sc, opt);
  CHECK_FALSE(s.interrupted);
  CHECK(completeness(dir / "r.h5") == 1);
  CHECK(slurp(victim) == "keep me");
  // The lock file is never opened through a symlink either.
  fs::create_symlink(victim, dir / "s.h5.lock");
  opt.output = (dir / "s.h5").string();
  CHECK_THROWS_AS(run::execute(sc, opt), InputError);
  CHECK(slurp(victim) == "keep me");
  fs::remove_all(dir);
}

TEST_CASE("a checkpoint whose data changed on disk is refused by name instead of resumed") {
  const fs::path dir = scratch("corrupt");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  opt.stop_after_points = 6;
  opt.checkpoint_seconds = 0.0;
  const run::Summary s = run::execute(sc, opt);
  REQUIRE(s.interrupted);
  const std::string partial = opt.output + ".partial";
  // Flip one byte inside the stored log-negativities (contiguous dataset: its file offset).
  haddr_t offset = 0;
  {
    H5::H5File f(partial, H5F_ACC_RDONLY);
    offset = H5Dget_offset(f.openDataSet("/protocols/tap_b/log_negativity").getId());
  }
  REQUIRE(offset != HADDR_UNDEF);
  {
    std::fstream io(partial, std::ios::in | std::ios::out | std::ios::binary);
    io.seekg(static_cast<std::streamoff>(offset) + 5);
    char c = 0;
    io.get(c);
    io.seekp(static_cast<std::streamoff>(offset) + 5);
    io.put(static_cast<char>(c ^ 0x10));
  }
  opt.stop_after_points = 0;
  try {
    run::execute(sc, opt);
    FAIL("a corrupted checkpoint must not be resumed");
  } catch (const InputError& e) {
    CHECK(e.file() == partial);
    CHECK(std::string(e.what()).find("checksum") != std::string::npos);
  }
  fs::remove_all(dir);
}

TEST_CASE("a second run on an output another run is writing is refused with a message") {
  const fs::path dir = scratch("lock");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  {
    const output::detail::OutputLock first(opt.output);
    try {
      run::execute(sc, opt);
      FAIL("the second run must be refused");
    } catch (const InputError& e) {
      CHECK(e.key() == "output.file");
      CHECK(std::string(e.what()).find("another run holds") != std::string::npos);
    }
  }
  // Once the first is gone (its lock released) the run goes ahead.
  CHECK_FALSE(run::execute(sc, opt).interrupted);
  fs::remove_all(dir);
}

TEST_CASE("an existing result is not replaced without force even when a checkpoint of another run lies beside it") {
  const fs::path dir = scratch("force");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  run::execute(sc, opt);
  const std::string before = slurp(opt.output);
  // A checkpoint of a changed scenario beside the complete result.
  std::string other_text = small_scenario;
  other_text.replace(other_text.find("squeezing_db = 3.0"), 18, "squeezing_db = 4.0");
  const scenario::Scenario other = scenario::parse(other_text, "other.toml");
  run::Options part = opt;
  part.output = (dir / "p.h5").string();
  part.stop_after_points = 3;
  part.checkpoint_seconds = 0.0;
  run::execute(other, part);
  fs::rename(part.output + ".partial", opt.output + ".partial");
  CHECK_THROWS_AS(run::execute(other, opt), InputError);
  CHECK(slurp(opt.output) == before);
  fs::remove_all(dir);
}

TEST_CASE("an output that is a folder, or on a read-only file system, is refused before any work") {
  const fs::path dir = scratch("readonly");
  const fs::path scenario_file = dir / "s.toml";
  std::ofstream(scenario_file) << small_scenario;
  fs::create_directories(dir / "a_folder");
  const testing::Outcome folder =
      testing::run_tool("run \"" + scenario_file.string() + "\" -o \"" + (dir / "a_folder").string() + "\"");
  CHECK(folder.code == 2);
  CHECK(folder.output.find("expected a file name, not a folder") != std::string::npos);
  const fs::path ro = dir / "ro";
  fs::create_directories(ro);
  if (::mount("tmpfs", ro.c_str(), "tmpfs", MS_RDONLY, "size=64k") == 0) {
    const testing::Outcome o = testing::run_tool("run \"" + scenario_file.string() + "\" -o \"" + (ro / "r.h5").string() + "\"");
    CAPTURE(o.output);
    CHECK(o.code == 2);
    CHECK(o.output.find("a folder this run can write") != std::string::npos);
    CHECK(o.output.find("Read-only file system") != std::string::npos);
    ::umount(ro.c_str());
  } else {
    MESSAGE("no read-only tmpfs here: the read-only case is not exercised");
  }
  fs::remove_all(dir);
}
