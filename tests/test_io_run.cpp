// The main job end to end: HDF5 layout and values, resume after an interruption, thread-count
// independence, and the verdict's crossing refinement.
#include <doctest/doctest.h>

#include <H5Cpp.h>
#include <hdf5_hl.h>
#include <unistd.h>

#include <boost/math/tools/roots.hpp>
#include <cmath>
#include <filesystem>
#include <string>
#include <vector>

#include "heraldry/gaussian.hpp"
#include "heraldry/run.hpp"
#include "heraldry/scenario.hpp"

namespace fs = std::filesystem;
using namespace heraldry;

namespace {

// A unique scratch folder per test (ctest may run tests in parallel).
fs::path scratch(const std::string& name) {
  const fs::path p = fs::temp_directory_path() / ("heraldry_test_" + name + "_" + std::to_string(::getpid()));
  fs::remove_all(p);
  fs::create_directories(p);
  return p;
}

// A small grid that runs in well under a second: 6 distances, a bare link, a two-sided
// subtraction with a swept tap (3 values) and a threshold counter with dark counts.
const char* small_scenario = R"(
title = "test bench: a cold line between two refrigerators"
[source]
frequency_ghz = 5.0
squeezing_db = 5.0
thermal_photons = 0.01
bandwidth_mhz = 1.0
[link]
medium = "line"
geometry = "one-way"
distance_m = { from = 0, to = 100, points = 6 }
target_m = 30
[link.line]
loss_db_per_m = 0.01
temperature_k = 0.5
[counters.det]
kind = "threshold"
efficiency = 0.6
dark_per_gate = 1e-3
gate_ns = 500
reset_us = 2
[[protocol]]
name = "bare"
steps = ["link"]
[[protocol]]
name = "subtract both"
steps = ["link", { tap = "a", transmissivity = 0.9, counter = "det" },
                 { tap = "b", transmissivity = [0.85, 0.9, 0.95], counter = "det" }]
[numerics]
tolerance = 1e-7
[output]
file = "unused.h5"
)";

std::vector<double> read_doubles(const H5::H5File& f, const std::string& path) {
  H5::DataSet ds = f.openDataSet(path);
  std::vector<double> v(static_cast<std::size_t>(ds.getSpace().getSimpleExtentNpoints()));
  ds.read(v.data(), H5::PredType::NATIVE_DOUBLE);
  return v;
}

std::string read_attr(const H5::H5Object& o, const char* name) {
  std::string s;
  H5::StrType t(H5::PredType::C_S1, H5T_VARIABLE);
  o.openAttribute(name).read(t, s);
  return s;
}

const char* protocol_datasets[] = {"success_probability", "negativity", "log_negativity", "fidelity",
                                   "heralding_rate_hz", "false_herald_fraction", "truncation_error"};

}  // namespace

TEST_CASE("a run writes every dataset of the layout with units, and its values equal a fresh evaluation") {
  const fs::path dir = scratch("layout");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  const run::Summary s = run::execute(sc, opt);
  REQUIRE_FALSE(s.interrupted);
  CHECK(s.total_points == 6 + 18);
  CHECK(s.computed_points == 24);
  REQUIRE(fs::exists(opt.output));
  CHECK_FALSE(fs::exists(opt.output + ".partial"));

  H5::H5File f(opt.output, H5F_ACC_RDONLY);
  CHECK(read_attr(f.openGroup("/"), "scenario_text") == sc.text);
  for (const char* path : {"/axes/distance_m", "/link/transmissivity_a", "/link/transmissivity_b", "/link/bath_photons_a",
                           "/link/bath_photons_b", "/gaussian/negativity", "/gaussian/log_negativity",
                           "/gaussian/fidelity", "/gaussian/plob_ebits", "/gaussian/rci_ebits"}) {
    CAPTURE(path);
    H5::DataSet ds = f.openDataSet(path);
    CHECK_FALSE(read_attr(ds, "units").empty());
    CHECK_FALSE(read_attr(ds, "description").empty());
  }
  for (const char* name : protocol_datasets) {
    H5::DataSet ds = f.openDataSet(std::string("/protocols/subtract_both/") + name);
    CHECK_FALSE(read_attr(ds, "units").empty());
    hsize_t dims[2];
    REQUIRE(ds.getSpace().getSimpleExtentNdims() == 2);
    ds.getSpace().getSimpleExtentDims(dims);
    CHECK(dims[0] == 6);
    CHECK(dims[1] == 3);
  }
  CHECK(read_doubles(f, "/protocols/subtract_both/axes/tap_b.transmissivity") == std::vector<double>{0.85, 0.9, 0.95});

  // The values are those of the physics kernel at the same point (what `probe` prints).
  const sweep::Plan plan = sweep::make_plan(sc);
  const auto en = read_doubles(f, "/protocols/subtract_both/log_negativity");
  const auto P = read_doubles(f, "/protocols/subtract_both/success_probability");
  for (std::size_t flat : {0u, 7u, 17u}) {
    const auto idx = plan.protocols[1].unflatten(flat);
    const point::PointResult r = point::evaluate(sweep::resolve(sc, plan, 1, idx));
    CHECK(en[flat] == r.log_negativity);
    CHECK(P[flat] == r.success_probability);
  }
  // The bare protocol in Fock space equals the Gaussian layer (within the 1e-7 tolerance).
  const auto bare_en = read_doubles(f, "/protocols/bare/log_negativity");
  const auto gauss_en = read_doubles(f, "/gaussian/log_negativity");
  for (std::size_t i = 0; i < bare_en.size(); ++i) CHECK(bare_en[i] == doctest::Approx(gauss_en[i]).epsilon(1e-5));
  // The verdict group is there with its summary lines.
  H5::Group v = f.openGroup("/verdict/subtract_both");
  CHECK_FALSE(read_attr(v, "summary").empty());
  CHECK(read_attr(v, "name") == "subtract both");
  // Labelled axes: every protocol dataset carries its grid's axes as HDF5 dimension scales
  // (HDF5 High-Level DS API), in the order of the group's `dims` attribute.
  const H5::Group g = f.openGroup("/protocols/subtract_both");
  CHECK(read_attr(g, "name") == "subtract both");
  CHECK(read_attr(g, "dims") == "distance_m,tap_b.transmissivity");
  for (const char* name : protocol_datasets) {
    CAPTURE(name);
    const H5::DataSet ds = g.openDataSet(name);
    char label[64] = {0};
    REQUIRE(H5DSget_label(ds.getId(), 0, label, sizeof label) > 0);
    CHECK(std::string(label) == "distance_m");
    REQUIRE(H5DSget_label(ds.getId(), 1, label, sizeof label) > 0);
    CHECK(std::string(label) == "tap_b.transmissivity");
    const H5::DataSet axis = g.openDataSet("axes/tap_b.transmissivity");
    CHECK(H5DSis_attached(ds.getId(), axis.getId(), 1) > 0);
  }
  // The resolved settings and the status codes are readable without the scenario text.
  CHECK(read_attr(f.openGroup("/settings/counters/det"), "kind") == "threshold");
  CHECK(read_attr(f.openGroup("/protocols/subtract_both/steps/3_tap"), "counter") == "det");
  CHECK(read_attr(f.openGroup("/"), "status_codes").find("1 truncation budget missed") != std::string::npos);
  fs::remove_all(dir);
}

TEST_CASE("a run interrupted midway resumes without recomputing and ends identical to an uninterrupted run") {
  const fs::path dir = scratch("resume");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options full;
  full.output = (dir / "full.h5").string();
  full.threads = 2;
  run::execute(sc, full);

  run::Options part = full;
  part.output = (dir / "part.h5").string();
  part.stop_after_points = 5;
  const run::Summary first = run::execute(sc, part);
  REQUIRE(first.interrupted);
  CHECK(fs::exists(part.output + ".partial"));
  CHECK_FALSE(fs::exists(part.output));
  const std::size_t done_first = first.computed_points;
  CHECK(done_first >= 5);
  CHECK(done_first < first.total_points);

  part.stop_after_points = 0;
  const run::Summary second = run::execute(sc, part);
  REQUIRE_FALSE(second.interrupted);
  CHECK(second.resumed_points == done_first);
  CHECK(second.computed_points == second.total_points - done_first);
  CHECK_FALSE(fs::exists(part.output + ".partial"));

  H5::H5File a(full.output, H5F_ACC_RDONLY), b(part.output, H5F_ACC_RDONLY);
  for (const char* proto : {"bare", "subtract both"})
    for (const char* name : protocol_datasets) {
      const std::string path = "/protocols/" + scenario::file_safe_name(proto) + "/" + name;
      CAPTURE(path);
      CHECK(read_doubles(a, path) == read_doubles(b, path));
    }
  fs::remove_all(dir);
}

TEST_CASE("a checkpoint of another scenario is refused with a clear message") {
  const fs::path dir = scratch("changed");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options part;
  part.output = (dir / "r.h5").string();
  part.threads = 1;
  part.stop_after_points = 3;
  REQUIRE(run::execute(sc, part).interrupted);
  std::string changed = small_scenario;
  changed.replace(changed.find("squeezing_db = 5.0"), 18, "squeezing_db = 5.5");
  const scenario::Scenario sc2 = scenario::parse(changed, "small.toml");
  part.stop_after_points = 0;
  CHECK_THROWS_WITH_AS(run::execute(sc2, part), doctest::Contains("the scenario changed since this checkpoint"),
                       InputError);
  fs::remove_all(dir);
}

TEST_CASE("an existing result is not overwritten without force") {
  const fs::path dir = scratch("force");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options opt;
  opt.output = (dir / "r.h5").string();
  opt.threads = 1;
  run::execute(sc, opt);
  CHECK_THROWS_WITH_AS(run::execute(sc, opt), doctest::Contains("pass --force"), InputError);
  opt.force = true;
  CHECK_FALSE(run::execute(sc, opt).interrupted);
  fs::remove_all(dir);
}

TEST_CASE("one and two threads give identical datasets") {
  const fs::path dir = scratch("threads");
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  run::Options one, two;
  one.output = (dir / "one.h5").string();
  one.threads = 1;
  two.output = (dir / "two.h5").string();
  two.threads = 2;
  run::execute(sc, one);
  run::execute(sc, two);
  H5::H5File a(one.output, H5F_ACC_RDONLY), b(two.output, H5F_ACC_RDONLY);
  for (const char* name : protocol_datasets) {
    const std::string path = std::string("/protocols/subtract_both/") + name;
    CHECK(read_doubles(a, path) == read_doubles(b, path));
  }
  fs::remove_all(dir);
}

TEST_CASE("the verdict refines the fidelity-1/2 distance between grid points to the closed-form root") {
  // Closed form (docs/physics.md §7.4): F = 2 / (2 + a + b - 2c) for the standard form; F = 1/2 where
  // a + b - 2c = 2. The root is found here with Boost's bracketing solver on the Gaussian layer,
  // and the verdict must find it from the Fock evaluations of the "bare" protocol on a 20 m grid.
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  const double r = squeezing_parameter_from_db(5.0);
  const double n_line = link::planck_occupation(5e9, 0.5);
  auto margin = [&](double d) {
    const double tau = std::pow(10.0, -0.01 * d / 10.0);
    return gaussian::fidelity(gaussian::apply(gaussian::tmst(r, 0.01), Mode::B, {tau, n_line})) - 0.5;
  };
  boost::uintmax_t iters = 100;
  const auto root = boost::math::tools::toms748_solve(margin, 0.0, 1000.0, boost::math::tools::eps_tolerance<double>(50), iters);
  const double expected = 0.5 * (root.first + root.second);

  std::string text = small_scenario;
  text.replace(text.find("distance_m = { from = 0, to = 100, points = 6 }"), 47, "distance_m = { from = 0, to = 400, points = 21 }");
  const scenario::Scenario wide = scenario::parse(text, "wide.toml");
  const fs::path dir = scratch("verdict");
  run::Options opt;
  opt.output = (dir / "v.h5").string();
  opt.threads = 2;
  const run::Summary s = run::execute(wide, opt);
  REQUIRE(s.data.verdict);
  const auto& bare = s.data.verdict->protocols.front();
  REQUIRE(bare.fidelity_half.kind == Crossing::Kind::crossed);
  CHECK(expected > 0.0);
  CHECK(expected < 400.0);
  CHECK(bare.fidelity_half.distance == doctest::Approx(expected).epsilon(1e-5));
  // The bare link's own (Gaussian) crossing agrees too.
  REQUIRE(s.data.verdict->fidelity_half.kind == Crossing::Kind::crossed);
  CHECK(s.data.verdict->fidelity_half.distance == doctest::Approx(expected).epsilon(1e-8));
  fs::remove_all(dir);
}

TEST_CASE("the midpoint relay baseline is Gaussian swapping of two pairs over half the distance") {
  // docs/physics.md §9 (derived; van Loock & Braunstein, PRA 61, 010302(R) (2000)): an ideal CV Bell
  // measurement on B1, B2 leaves (A1, A2) in standard form with a' = a - c^2/(2b), c' = c^2/(2b)
  // for identical pairs (a, b, c). Here each pair is the TMST through a cold line of length d/2.
  const scenario::Scenario sc = scenario::parse(small_scenario, "small.toml");
  const double d = 60.0;
  const double tau = std::pow(10.0, -0.01 * (d / 2) / 10.0);  // 0.01 dB/m
  const double n_line = link::planck_occupation(5e9, 0.5);
  const double r = squeezing_parameter_from_db(5.0), k = 2 * 0.01 + 1;
  const double a = k * std::cosh(2 * r), c0 = k * std::sinh(2 * r);
  const double b = tau * a + (1 - tau) * (2 * n_line + 1), c = std::sqrt(tau) * c0;
  const gaussian::StandardForm relay = point::relay_state(sweep::source_of(sc), sc.link.model, d);
  CHECK(relay.a == doctest::Approx(a - c * c / (2 * b)).epsilon(1e-12));
  CHECK(relay.b == doctest::Approx(a - c * c / (2 * b)).epsilon(1e-12));
  CHECK(relay.c == doctest::Approx(c * c / (2 * b)).epsilon(1e-12));
  // Identical TMSVs without loss: tanh r' = tanh^2 r (docs/physics.md §9).
  std::string lossless = small_scenario;
  lossless.replace(lossless.find("loss_db_per_m = 0.01"), 20, "loss_db_per_m = 0.00");
  lossless.replace(lossless.find("thermal_photons = 0.01"), 22, "thermal_photons = 0.00");
  const scenario::Scenario ideal_sc = scenario::parse(lossless, "lossless.toml");
  const gaussian::StandardForm ideal = point::relay_state(sweep::source_of(ideal_sc), ideal_sc.link.model, d);
  CHECK(ideal.a == doctest::Approx(std::cosh(2 * std::atanh(std::pow(std::tanh(r), 2)))).epsilon(1e-12));
  // The run stores it beside the bare link.
  const fs::path dir = scratch("relay");
  run::Options opt;
  opt.output = (dir / "relay.h5").string();
  opt.threads = 2;
  const run::Summary s = run::execute(sc, opt);
  fs::remove_all(dir);
  REQUIRE(s.data.link.relay_log_negativity.size() == sc.link.distances_m.size());
  CHECK(s.data.link.relay_log_negativity[3] ==
        doctest::Approx(gaussian::log_negativity(point::relay_state(sweep::source_of(sc), sc.link.model, sc.link.distances_m[3]))).epsilon(1e-14));
  REQUIRE(s.data.verdict->relay_log_negativity.has_value());
}

TEST_CASE("the detector trade map's break-even lies between point evaluations of opposite sign") {
  // Common practice for contour maps: the zero of the E_N gain interpolated between two grid cells
  // must separate fresh evaluations taken just inside each side (the gain falls monotonically with
  // the dark rate: dark counts herald unsubtracted states, docs/physics.md §10 item 7).
  const char* text = R"(
title = "trade map test"
[source]
frequency_ghz = 5.0
squeezing_db = 5.0
bandwidth_mhz = 1.0
[link]
medium = "line"
distance_m = [40]
[link.line]
loss_db_per_m = 0.01
temperature_k = 0.5
[counters.det]
kind = "threshold"
efficiency = [0.3, 0.8]
dark_rate_hz = [1e2, 1e3, 1e4, 1e5]
gate_ns = 1000
[[protocol]]
name = "two taps"
steps = ["link", { tap = "a", transmissivity = 0.9, counter = "det" }, { tap = "b", transmissivity = 0.9, counter = "det" }]
[numerics]
tolerance = 1e-7
)";
  const scenario::Scenario sc = scenario::parse(text, "trade.toml");
  const fs::path dir = scratch("trade");
  run::Options opt;
  opt.output = (dir / "t.h5").string();
  opt.threads = 2;
  const run::Summary s = run::execute(sc, opt);
  fs::remove_all(dir);
  const verdict::ProtocolVerdict& pv = s.data.verdict->protocols.at(0);
  REQUIRE(pv.slice_shape == std::vector<std::size_t>{2, 4});
  const sweep::Plan plan = sweep::make_plan(sc);
  const auto& rates = plan.protocols[0].axes[2].values;
  const double bare = s.data.verdict->bare_log_negativity;
  std::size_t crossings = 0;
  for (std::size_t row = 0; row < 2; ++row) {
    for (std::size_t j = 0; j + 1 < 4; ++j) {
      const double g0 = pv.slice[row * 4 + j].log_negativity - bare, g1 = pv.slice[row * 4 + j + 1].log_negativity - bare;
      if (!(g0 > 0.0 && g1 <= 0.0)) continue;
      ++crossings;
      // The map's contour passes between these two cells: the true zero of the gain, found by
      // root refinement on fresh evaluations, must lie between them, with the gain positive just
      // below it and negative just above it.
      auto gain_at = [&](double rate) {
        sweep::Plan pinned = plan;
        pinned.protocols[0].axes[2].values = {rate};
        const std::vector<std::size_t> idx{0, row, 0};
        const point::PointResult r = point::evaluate(sweep::resolve(sc, pinned, 0, idx, 40.0));
        REQUIRE(r.status == Status::ok);
        return r.log_negativity - bare;
      };
      const std::vector<double> cell{rates[j], rates[j + 1]}, values{g0, g1};
      const Crossing zero = last_downward_crossing(gain_at, cell, values, 1e-6 * rates[j + 1]);
      REQUIRE(zero.kind == Crossing::Kind::crossed);
      CAPTURE(zero.distance);
      CHECK(zero.distance > rates[j]);
      CHECK(zero.distance < rates[j + 1]);
      CHECK(gain_at(zero.distance * 0.99) > 0.0);
      CHECK(gain_at(zero.distance * 1.01) < 0.0);
    }
  }
  CHECK(crossings >= 1);
}

TEST_CASE("the run-time estimate covers every point and divides over threads and ranks as its model says") {
  // No timing is asserted (speed is for benchmarks): the estimate's bookkeeping is.
  const heraldry::scenario::Scenario sc = heraldry::scenario::demo();
  const heraldry::run::Estimate e = heraldry::run::estimate(sc, 0.3);
  CHECK(e.points == heraldry::sweep::make_plan(sc).total_points());
  CHECK(e.timed_points >= 1);  // the most expensive protocol's cheapest point at least (others if the budget allows)
  CHECK(e.sweep_cpu_seconds > 0.0);
  CHECK(e.verdict_cpu_seconds > 0.0);
  CHECK(e.verdict_crossing_jobs == 3 * sc.protocols.size());
  CHECK(e.cpu_seconds() == e.sweep_cpu_seconds + e.verdict_cpu_seconds);
  // One thread, one rank: the CPU time itself. The sweep divides over K ranks x T threads, the
  // verdict (rank 0) over T threads, its crossings over at most 3 jobs per protocol.
  CHECK(e.seconds(1, 1) == doctest::Approx(e.cpu_seconds()).epsilon(1e-12));
  const double other = e.verdict_cpu_seconds - e.verdict_crossings_cpu_seconds;
  CHECK(e.seconds(4, 2) == doctest::Approx(e.sweep_cpu_seconds / 8 + other / 4 + e.verdict_crossings_cpu_seconds / 4).epsilon(1e-12));
  CHECK(e.seconds(64, 1) == doctest::Approx(e.sweep_cpu_seconds / 64 + other / 64 + e.verdict_crossings_cpu_seconds / 12).epsilon(1e-12));
}
