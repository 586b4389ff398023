// Relay protocols end to end: scenario -> run -> HDF5 group and verdict.
#include <doctest/doctest.h>

#include <H5Cpp.h>
#include <unistd.h>

#include <cmath>
#include <filesystem>
#include <string>
#include <vector>

#include "heraldry/gaussian.hpp"
#include "heraldry/run.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"

namespace fs = std::filesystem;
using namespace heraldry;

namespace {

const char* relay_scenario = R"(
title = "test bench: a relay station on a cold line"
[source]
frequency_ghz = 5.0
squeezing_db = 5.0
thermal_photons = 0.01
bandwidth_mhz = 1.0
[link]
medium = "line"
geometry = "one-way"
distance_m = { from = 0, to = 100, points = 4 }
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
name = "station"
relay = { bell_efficiency = 0.9 }
steps = ["link"]
[[protocol]]
name = "station, tap b"
relay = { bell_efficiency = 0.9 }
steps = ["link", { tap = "b", transmissivity = 0.9, counter = "det" }]
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

}  // namespace

TEST_CASE("a relay protocol runs end to end: the unit-gain swap of its arms in the file and the verdict") {
  const scenario::Scenario sc = scenario::parse(relay_scenario, "relay.toml");
  REQUIRE(sc.protocols[1].relay.has_value());
  CHECK(sc.protocols[1].relay->bell_efficiency == 0.9);
  CHECK_FALSE(sc.protocols[0].relay.has_value());
  const fs::path dir = fs::temp_directory_path() / ("heraldry_test_relay_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  run::Options opt;
  opt.output = (dir / "relay.h5").string();
  opt.threads = 2;
  const run::Summary s = run::execute(sc, opt);
  H5::H5File f(opt.output, H5F_ACC_RDONLY);
  // Gaussian arms: each is TMST(r, n) with b through the line over d/2 (closed form of the cold
  // line: tau = 10^{-0.01 (d/2) / 10}, bath the Planck occupation at 0.5 K); the station's
  // unit-gain swap adds the arm's EPR variance a + b - 2c and 2 (1 - eta)/eta to b1
  // (Braunstein & Kimble, PRL 80, 869 (1998)).
  const auto en = read_doubles(f, "/protocols/station/log_negativity");
  const auto fid = read_doubles(f, "/protocols/station/fidelity");
  const double r = squeezing_parameter_from_db(5.0), k = 2 * 0.01 + 1;
  const double n_line = link::planck_occupation(5e9, 0.5);
  for (std::size_t i = 0; i < sc.link.distances_m.size(); ++i) {
    const double tau = std::pow(10.0, -0.01 * (sc.link.distances_m[i] / 2) / 10.0);
    const gaussian::StandardForm arm{k * std::cosh(2 * r), tau * k * std::cosh(2 * r) + (1 - tau) * (2 * n_line + 1),
                                     std::sqrt(tau) * k * std::sinh(2 * r)};
    const auto expected = gaussian::swap_unit_gain(arm, arm, 0.9);
    CAPTURE(i);
    CHECK(std::abs(en[i] - gaussian::log_negativity(expected)) < 1e-6);
    CHECK(std::abs(fid[i] - gaussian::fidelity(expected)) < 1e-6);
  }
  // The heralded relay: rate = trial rate x P, P = P_arm^2 (the arm evaluated on its own).
  const auto p = read_doubles(f, "/protocols/station__tap_b/success_probability");
  const auto rate = read_doubles(f, "/protocols/station__tap_b/heralding_rate_hz");
  const double trials = steps::trial_rate_hz(1e6, {steps::CounterModel{steps::CounterKind::threshold, 0.6, 1e-3, 5e-7, 2e-6}});
  for (std::size_t i = 0; i < p.size(); ++i) CHECK(rate[i] == doctest::Approx(trials * p[i]).epsilon(1e-12));
  const sweep::Plan plan = sweep::make_plan(sc);
  const std::vector<std::size_t> index{1};
  const point::PointSpec spec = sweep::resolve(sc, plan, 2, index);
  const point::RelayResult direct =
      point::evaluate_relay({point::relay_arm(spec, sc.link.model, sc.link.distances_m[1]), 0.9});
  CHECK(p[1] == doctest::Approx(direct.arm.success_probability * direct.arm.success_probability).epsilon(1e-12));
  // The group says what the figures are and what the rate assumes.
  H5::Group g = f.openGroup("/protocols/station/relay");
  double eta = 0.0;
  g.openAttribute("bell_efficiency").read(H5::PredType::NATIVE_DOUBLE, &eta);
  CHECK(eta == 0.9);
  std::string description;
  g.openAttribute("description").read(H5::StrType(H5::PredType::C_S1, H5T_VARIABLE), description);
  CHECK(description.find("no quantum memory") != std::string::npos);
  f.close();
  fs::remove_all(dir);
  REQUIRE(s.data.verdict.has_value());
  const auto& pv = s.data.verdict->protocols[1];
  CHECK(pv.summary.find("no quantum memory") != std::string::npos);
  CHECK(pv.summary.find("the Gaussian relay") != std::string::npos);
  // A unit-gain swap of Gaussian arms over a thermal path is noisier than the bare link.
  CHECK_FALSE(pv.pays_off_log_negativity);
  // ... and than the Gaussian relay: the conditional state has the figures of the best gain
  // (gaussian::swap_feed_forward at the matched gain), and unit gain with eta < 1 is not it.
  REQUIRE(pv.breakeven_relay_log_negativity.has_value());
  CHECK(pv.breakeven_relay_log_negativity->kind == Crossing::Kind::never_positive);
  CHECK(pv.breakeven_relay_fidelity->kind == Crossing::Kind::never_positive);
  CHECK_FALSE(s.data.verdict->protocols[0].breakeven_relay_log_negativity.has_value());
}
