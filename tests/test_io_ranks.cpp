// The MPI hooks of the main job seen from a single process: without an MPI launcher (or in a
// build without MPI) a run is the ordinary single-process run and records one rank.
#include <doctest/doctest.h>

#include <H5Cpp.h>
#include <unistd.h>

#include <filesystem>
#include <string>

#include "heraldry/ranks.hpp"
#include "heraldry/run.hpp"
#include "heraldry/scenario.hpp"

namespace fs = std::filesystem;
using namespace heraldry;

TEST_CASE("without an MPI launcher a rank session is rank 0 of 1 and the run records one rank") {
  const ranks::Session session;
  CHECK(session.ranks().rank == 0);
  CHECK(session.ranks().size == 1);

  const scenario::Scenario demo = scenario::demo();
  bool loaded = false;
  const auto shared = ranks::shared_scenario([&] {
    loaded = true;
    return demo;
  });
  REQUIRE(shared);
  CHECK(loaded);
  CHECK(shared->text == demo.text);

  // A 2-point grid of the bare link only: quick, and enough to see the provenance.
  std::string text = R"(
title = "rank test: one cold line"
[source]
frequency_ghz = 5.0
squeezing_db = 3.0
thermal_photons = 0.01
bandwidth_mhz = 1.0
[link]
medium = "line"
geometry = "one-way"
distance_m = [0, 10]
target_m = 10
[link.line]
loss_db_per_m = 0.01
temperature_k = 0.5
[[protocol]]
name = "bare"
steps = ["link"]
[numerics]
tolerance = 1e-6
[output]
file = "unused.h5"
)";
  const scenario::Scenario sc = scenario::parse(text, "ranks.toml");
  const fs::path dir = fs::temp_directory_path() / ("heraldry_test_ranks_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  const run::Summary s = run::execute(sc, opt);
  CHECK_FALSE(s.worker);
  CHECK(s.ranks == 1);
  CHECK(s.computed_points == 2);
  H5::H5File f(opt.output, H5F_ACC_RDONLY);
  long long ranks = 0;
  f.openGroup("/").openAttribute("ranks").read(H5::PredType::NATIVE_LLONG, &ranks);
  CHECK(ranks == 1);
  f.close();
  fs::remove_all(dir);
}
