// The link and the source as a lab has them, through the scenario: antennas per end with their
// losses, the source as measured, a frequency per mode, swept hardware, measured channels.
// Each is checked against an independent route to the same numbers (closed forms, the kernels
// called by hand, the equivalent description of the same state).
#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/verdict.hpp"

using namespace heraldry;

namespace {

std::string scenario_text(const std::string& source, const std::string& link, const std::string& counters = "",
                          const std::string& protocols = "[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n") {
  return "title = \"hardware test\"\n[source]\n" + source + "\n" + link + "\n" + counters + "\n" + protocols;
}

const char* air_link = R"([link]
medium = "air"
distance_m = [1.0, 3.0, 5.0]
[link.antenna]
diameter_m = 1.2
aperture_efficiency = 0.7
)";

// Probe figures of the bare link and of a one-sided tap, to compare two descriptions.
void check_same_probe(const scenario::Scenario& a, const scenario::Scenario& b, double tol) {
  const sweep::Probe pa = sweep::probe(a, 2.0), pb = sweep::probe(b, 2.0);
  CHECK(pa.link.log_negativity == doctest::Approx(pb.link.log_negativity).epsilon(tol));
  CHECK(pa.link.fidelity == doctest::Approx(pb.link.fidelity).epsilon(tol));
  REQUIRE(pa.protocols.size() == pb.protocols.size());
  for (std::size_t i = 0; i < pa.protocols.size(); ++i) {
    CAPTURE(pa.protocols[i].name);
    CHECK(pa.protocols[i].result.success_probability ==
          doctest::Approx(pb.protocols[i].result.success_probability).epsilon(tol));
    CHECK(pa.protocols[i].result.log_negativity == doctest::Approx(pb.protocols[i].result.log_negativity).epsilon(tol));
  }
}

const char* tap_protocols = R"([[protocol]]
name = "bare"
steps = ["link"]
[[protocol]]
name = "tap b"
steps = ["link", { tap = "b", transmissivity = 0.95, counter = "c" }]
)";
const char* one_counter = "[counters.c]\nkind = \"threshold\"\nefficiency = 0.6\ndark_per_gate = 1e-3\n";

}  // namespace

TEST_CASE("a source given by its measured squeezing and antisqueezing equals the TMST with those EPR variances") {
  // EPR variances of a TMST (r, n): V- = (2n+1) e^{-2r}, V+ = (2n+1) e^{2r} relative to vacuum
  // (closed form); in dB, S = -10 log10 V-, A = 10 log10 V+.
  const double r = squeezing_parameter_from_db(6.0), n = 0.05;
  const double s_db = -10.0 * std::log10((2 * n + 1) * std::exp(-2 * r));
  const double a_db = 10.0 * std::log10((2 * n + 1) * std::exp(2 * r));
  char measured[160];
  std::snprintf(measured, sizeof measured,
                "frequency_ghz = 5.4\nmeasured_squeezing_db = %.17g\nmeasured_antisqueezing_db = %.17g\nbandwidth_mhz = 2",
                s_db, a_db);
  const auto from_db = scenario::parse(scenario_text("frequency_ghz = 5.4\nsqueezing_db = 6\nthermal_photons = 0.05\nbandwidth_mhz = 2",
                                                     air_link, one_counter, tap_protocols),
                                       "a.toml");
  const auto from_measured = scenario::parse(scenario_text(measured, air_link, one_counter, tap_protocols), "b.toml");
  CHECK(from_measured.source.given_as == "measured");
  CHECK(from_measured.source.squeezing_r == doctest::Approx(r).epsilon(1e-13));
  CHECK(from_measured.source.thermal_photons == doctest::Approx(n).epsilon(1e-12));
  check_same_probe(from_db, from_measured, 1e-10);
  // Below the uncertainty bound (V- V+ < 1) the measurement is refused, naming the key.
  CHECK_THROWS_WITH_AS(
      scenario::parse(scenario_text("frequency_ghz = 5.4\nmeasured_squeezing_db = 6\nmeasured_antisqueezing_db = 3\nbandwidth_mhz = 2",
                                    air_link),
                      "c.toml"),
      doctest::Contains("measured_antisqueezing_db"), InputError);
}

TEST_CASE("a measured covariance matrix of a TMST equals the TMST, in every convention and quadrature order") {
  const double r = 0.6, n = 0.02;
  const double a = (2 * n + 1) * std::cosh(2 * r), c = (2 * n + 1) * std::sinh(2 * r);
  char db[64];
  std::snprintf(db, sizeof db, "%.17g", squeezing_db_from_parameter(r));
  const auto reference = scenario::parse(
      scenario_text("frequency_ghz = 5.4\nsqueezing_db = " + std::string(db) + "\nthermal_photons = 0.02\nbandwidth_mhz = 2",
                    air_link, one_counter, tap_protocols),
      "ref.toml");
  // Shot-noise units, interleaved (x_A, p_A, x_B, p_B): [[a I, c Z], [c Z, a I]] (closed form).
  struct Case {
    double scale;
    const char* vacuum;
    bool grouped;
  } cases[] = {{1.0, "1", false}, {0.5, "0.5", false}, {0.25, "0.25", true}};
  for (const Case& k : cases) {
    CAPTURE(std::string(k.vacuum));
    double v[4][4] = {{a, 0, c, 0}, {0, a, 0, -c}, {c, 0, a, 0}, {0, -c, 0, a}};
    if (k.grouped) {
      // (x_A, x_B, p_A, p_B)
      const double g[4][4] = {{a, c, 0, 0}, {c, a, 0, 0}, {0, 0, a, -c}, {0, 0, -c, a}};
      for (int i = 0; i < 4; ++i)
        for (int j = 0; j < 4; ++j) v[i][j] = g[i][j];
    }
    std::string matrix = "[";
    for (int i = 0; i < 4; ++i) {
      matrix += i ? ", [" : "[";
      for (int j = 0; j < 4; ++j) {
        char cell[40];
        std::snprintf(cell, sizeof cell, "%s%.17g", j ? ", " : "", v[i][j] * k.scale);
        matrix += cell;
      }
      matrix += "]";
    }
    matrix += "]";
    const std::string src = "frequency_ghz = 5.4\nbandwidth_mhz = 2\n[source.covariance]\nmatrix = " + matrix +
                            "\nvacuum_variance = " + k.vacuum + "\norder = \"" + (k.grouped ? "xx_pp" : "xp_xp") + "\"";
    const auto measured = scenario::parse(scenario_text(src, air_link, one_counter, tap_protocols), "cm.toml");
    REQUIRE(measured.source.state.has_value());
    CHECK(measured.source.state->a == doctest::Approx(a).epsilon(1e-12));
    CHECK(measured.source.state->c == doctest::Approx(c).epsilon(1e-12));
    check_same_probe(reference, measured, 1e-9);
  }
  // An unphysical matrix (below the uncertainty relation) is refused with its symplectic figure.
  CHECK_THROWS_AS(scenario::parse(scenario_text("frequency_ghz = 5.4\nbandwidth_mhz = 2\n[source.covariance]\n"
                                                "matrix = [[0.5, 0, 0, 0], [0, 0.5, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1]]",
                                                air_link),
                                  "bad.toml"),
                  InputError);
}

TEST_CASE("a nondegenerate source whose two frequencies are equal is today's degenerate source") {
  const auto one = scenario::parse(scenario_text("frequency_ghz = 5.4\nsqueezing_db = 6\nbandwidth_mhz = 2", air_link), "a.toml");
  const auto two = scenario::parse(
      scenario_text("frequency_ghz = 9\nfrequency_a_ghz = 5.4\nfrequency_b_ghz = 5.4\nsqueezing_db = 6\nbandwidth_mhz = 2", air_link),
      "b.toml");
  for (double d : {0.5, 2.0, 5.0}) {
    const auto la = link::link_budget(one.link.model, d), lb = link::link_budget(two.link.model, d);
    CHECK(la.b.channel.transmissivity == lb.b.channel.transmissivity);
    CHECK(la.b.channel.bath_photons == lb.b.channel.bath_photons);
  }
  // Different frequencies: each mode its own Planck occupation and beam coupling (mode b's here).
  const auto split = scenario::parse(
      scenario_text("frequency_ghz = 5.4\nfrequency_b_ghz = 8.0\nsqueezing_db = 6\nbandwidth_mhz = 2", air_link), "c.toml");
  link::LinkModel by_hand = one.link.model;
  by_hand.frequency_hz = 8.0e9;
  CHECK(link::link_budget(split.link.model, 3.0).b.channel.transmissivity ==
        link::link_budget(by_hand, 3.0).b.channel.transmissivity);
}

TEST_CASE("an end table overrides the shared antenna for its end only, as the kernels compute it by hand") {
  const std::string link = std::string(air_link) +
                           "spillover_loss = 1e-4\nspillover_temperature_k = 290\n[link.receiver_antenna]\n"
                           "diameter_m = 0.3\nohmic_loss_db = 0.01\nphysical_temperature_k = 4\n";
  const auto sc = scenario::parse(scenario_text("frequency_ghz = 5.4\nsqueezing_db = 6\nbandwidth_mhz = 2", link), "ends.toml");
  link::LinkModel m;
  m.frequency_hz = 5.4e9;
  link::Antenna shared;
  shared.diameter_m = 1.2;
  shared.aperture_efficiency = 0.7;
  shared.spillover_loss = 1e-4;
  shared.spillover_temperature_k = 290.0;
  m.antenna = shared;
  link::Antenna receiver = shared;
  receiver.diameter_m = 0.3;
  receiver.ohmic_loss = link::lost_fraction_from_db(0.01);
  receiver.physical_temperature_k = 4.0;
  m.receiver_antenna = receiver;
  for (double d : {1.0, 5.0}) {
    const auto from_file = link::link_budget(sc.link.model, d), by_hand = link::link_budget(m, d);
    CHECK(from_file.b.channel.transmissivity == doctest::Approx(by_hand.b.channel.transmissivity).epsilon(1e-15));
    CHECK(from_file.b.channel.bath_photons == doctest::Approx(by_hand.b.channel.bath_photons).epsilon(1e-13));
    CHECK(from_file.b.loss.ohmic_db == doctest::Approx(0.01).epsilon(1e-12));  // the receiver's only
  }
}

TEST_CASE("swept hardware becomes axes of every protocol it concerns, resolved into the kernels' inputs") {
  const std::string link = std::string(air_link).replace(std::string(air_link).find("diameter_m = 1.2"), 16,
                                                         "diameter_m = [0.6, 1.2]") +
                           "spillover_loss = { from = 0, to = 2e-4, points = 3 }\n";
  const std::string counters =
      "[counters.c]\nkind = \"threshold\"\nefficiency = 0.6\ndark_rate_hz = 1000\ngate_ns = [100, 1000]\nreset_us = 5\n";
  const auto sc =
      scenario::parse(scenario_text("frequency_ghz = 5.4\nsqueezing_db = [4, 6]\nbandwidth_mhz = 2", link, counters, tap_protocols),
                      "swept.toml");
  const sweep::Plan plan = sweep::make_plan(sc);
  // bare: distance, squeezing, diameter, spillover; tap b also the counter's gate.
  std::vector<std::string> bare_axes, tap_axes;
  for (const auto& a : plan.protocols[0].axes) bare_axes.push_back(a.name);
  for (const auto& a : plan.protocols[1].axes) tap_axes.push_back(a.name);
  CHECK(bare_axes == std::vector<std::string>{"distance_m", "source.squeezing_db", "link.antenna.diameter_m",
                                              "link.antenna.spillover_loss"});
  CHECK(tap_axes == std::vector<std::string>{"distance_m", "source.squeezing_db", "link.antenna.diameter_m",
                                             "link.antenna.spillover_loss", "counters.c.gate_ns"});
  // One point of the grid: every setting reaches the kernels' inputs.
  const std::vector<std::size_t> idx{1, 1, 0, 2, 0};  // 3 m, 6 dB, 0.6 m, 2e-4, 100 ns
  const point::PointSpec spec = sweep::resolve(sc, plan, 1, idx);
  CHECK(spec.source.squeezing_r == doctest::Approx(squeezing_parameter_from_db(6.0)).epsilon(1e-15));
  link::LinkModel m = sc.link.model;
  m.antenna->diameter_m = 0.6;
  m.antenna->spillover_loss = 2e-4;
  const auto budget = link::link_budget(m, 3.0);
  CHECK(spec.channel_b.transmissivity == doctest::Approx(budget.b.channel.transmissivity).epsilon(1e-15));
  CHECK(spec.channel_b.bath_photons == doctest::Approx(budget.b.channel.bath_photons).epsilon(1e-13));
  REQUIRE(spec.counters.size() == 1);
  CHECK(spec.counters[0].gate_s == doctest::Approx(100e-9).epsilon(1e-15));
  // The dark rate per gate at that gate: p = 1 - exp(-R t) (Poisson arrivals, common practice).
  CHECK(spec.counters[0].dark == doctest::Approx(-std::expm1(-1000.0 * 100e-9)).epsilon(1e-12));
  // The trial rate follows the gate: 1 / (gate + reset) (common practice).
  const point::PointResult r = point::evaluate(spec);
  if (r.status == Status::ok)
    CHECK(r.heralding_rate_hz == doctest::Approx(r.success_probability / (100e-9 + 5e-6)).epsilon(1e-12));
}

TEST_CASE("measured channels need no medium and may give the noise they add instead of the bath") {
  // added_photons N = (1 - tau) n_E, so n_E = N / (1 - tau) (closed form of the thermal-loss channel).
  const auto sc = scenario::parse(scenario_text("frequency_ghz = 5.0\nsqueezing_db = 4\nbandwidth_mhz = 2",
                                                "[link.direct]\na = { transmissivity = 1.0 }\n"
                                                "b = { transmissivity = 0.8, added_photons = 0.05 }\n"),
                                  "direct.toml");
  REQUIRE(sc.link.measured());
  CHECK(sc.link.model.direct->b.bath_photons == doctest::Approx(0.05 / 0.2).epsilon(1e-15));
  CHECK(sc.link.distances_m == std::vector<double>{0.0});
  CHECK_THROWS_WITH_AS(scenario::parse(scenario_text("frequency_ghz = 5.0\nsqueezing_db = 4\nbandwidth_mhz = 2",
                                                     "[link]\nmedium = \"line\"\n[link.direct]\na = { transmissivity = 1.0 }\n"
                                                     "b = { transmissivity = 0.8 }\n"),
                                       "x.toml"),
                       doctest::Contains("nothing but [link.direct]"), InputError);
}

TEST_CASE("a key that cannot be swept says so") {
  CHECK_THROWS_WITH_AS(scenario::parse(scenario_text("frequency_ghz = [5.0, 6.0]\nsqueezing_db = 4\nbandwidth_mhz = 2", air_link),
                                       "f.toml"),
                       doctest::Contains("cannot be swept"), InputError);
}

TEST_CASE("with swept hardware each protocol is compared with the bare link of its own best setting") {
  const std::string link = std::string(air_link).replace(std::string(air_link).find("diameter_m = 1.2"), 16,
                                                         "diameter_m = [0.9, 1.2]");
  const auto sc = scenario::parse(scenario_text("frequency_ghz = 5.4\nsqueezing_db = 6\nbandwidth_mhz = 2", link,
                                                one_counter, tap_protocols),
                                  "best.toml");
  const sweep::Plan plan = sweep::make_plan(sc);
  std::vector<sweep::ProtocolTable> tables;
  for (const auto& pp : plan.protocols) {
    sweep::ProtocolTable t;
    t.points.resize(pp.size());
    t.done.assign(pp.size(), 0);
    tables.push_back(t);
  }
  const verdict::Verdict v = verdict::compute(sc, plan, tables, 1);
  // The bare protocol's best setting is the larger dish (more E_N); its comparison bare link is
  // the Gaussian state with that dish at the target (5 m), by hand:
  link::LinkModel m = sc.link.model;
  m.antenna->diameter_m = 1.2;
  const double expected = gaussian::log_negativity(point::bare_state(sweep::source_of(sc), m, 5.0));
  CHECK(v.protocols[0].bare_log_negativity == doctest::Approx(expected).epsilon(1e-12));
  REQUIRE(v.protocols[0].best.size() == 1);
  CHECK(v.protocols[0].best[0].first == "link.antenna.diameter_m");
  CHECK(v.protocols[0].best[0].second == 1.2);
  // The bare link itself never "pays off" against itself.
  CHECK_FALSE(v.protocols[0].pays_off_log_negativity);
  CHECK_FALSE(v.protocols[0].pays_off_fidelity);
}
