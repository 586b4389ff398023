// The figures the README quotes in "What the physics says", the dark-count keys of its scenario
// table and its relay baseline, computed through the library as `heraldry probe` computes them
// (scenario text -> probe) and compared with the quoted figures to the printed precision. Where
// a closed form exists the same figure is also checked against it (named beside the check).
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <string>
#include <tuple>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "heraldry/measures.hpp"
#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/steps.hpp"
#include "heraldry/sweep.hpp"

using namespace heraldry;

namespace {

// |x - quoted| within half a unit of the last printed digit.
void check_printed(double x, double quoted, int decimals) {
  CAPTURE(x);
  CAPTURE(quoted);
  CHECK(std::abs(x - quoted) <= 0.5 * std::pow(10.0, -decimals) + 1e-12);
}

const point::PointResult& row(const sweep::Probe& p, const std::string& name) {
  for (const auto& r : p.protocols)
    if (r.name == name) return r.result;
  FAIL("no protocol " << name);
  return p.protocols.front().result;
}

// A lossless bench (measured channels, no bath) with ideal counters and a TMSV of r = 0.5
// (squeezing_db = 20 r / ln 10 = 4.3429448190 dB).
std::string bench(const std::string& squeezing_db, const std::string& protocols) {
  return "title = \"bench\"\n[source]\nfrequency_ghz = 5.0\nsqueezing_db = " + squeezing_db +
         "\nbandwidth_mhz = 1.0\n[link]\n[link.direct]\n"
         "a = { transmissivity = 1.0, bath_photons = 0.0 }\nb = { transmissivity = 1.0, bath_photons = 0.0 }\n"
         "[counters.ideal]\nkind = \"threshold\"\nefficiency = 1.0\n"
         "[counters.pnr]\nkind = \"resolving\"\nefficiency = 1.0\n"
         "[counters.dark]\nkind = \"threshold\"\nefficiency = 1.0\ndark_per_gate = 1e-3\n"
         "[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n" +
         protocols + "[numerics]\ntolerance = 1e-9\n";
}

std::string protocol(const std::string& name, const std::string& steps) {
  return "[[protocol]]\nname = \"" + name + "\"\nsteps = [\"link\", " + steps + "]\n";
}

const char* r_half_db = "4.342944819032518";

}  // namespace

// ------------------------------------------------------------------ dark counts per gate

TEST_CASE("dark_per_gate is a click probability for a threshold counter and a Poisson mean for a resolving one") {
  // Threshold model P(click | k) = 1 - (1 - p)(1 - eta)^k (Kitagawa et al., PRA 73, 042310
  // (2006)); resolving model with Poissonian dark counts of mean nu, P(j | 0) = e^{-nu} nu^j / j!
  // (docs/physics.md §4.2). No light: k = 0.
  steps::CounterModel threshold{steps::CounterKind::threshold, 1.0, 0.2, 1e-6, 0.0};
  steps::CounterModel resolving{steps::CounterKind::resolving, 1.0, 0.2, 1e-6, 0.0};
  CHECK(steps::reading_probability(threshold, 1, 0) == doctest::Approx(0.2).epsilon(1e-15));
  CHECK(steps::reading_probability(threshold, 0, 0) == doctest::Approx(0.8).epsilon(1e-15));
  CHECK(steps::reading_probability(resolving, 1, 0) == doctest::Approx(0.2 * std::exp(-0.2)).epsilon(1e-15));
  CHECK(steps::reading_probability(resolving, 0, 0) == doctest::Approx(std::exp(-0.2)).epsilon(1e-15));
  CHECK(steps::reading_probability(resolving, 2, 0) == doctest::Approx(0.02 * std::exp(-0.2)).epsilon(1e-15));
  // The README's printed values: 0.1637 (exactly one count), 0.1813 (at least one).
  check_printed(steps::reading_probability(resolving, 1, 0), 0.1637, 4);
  check_printed(1.0 - steps::reading_probability(resolving, 0, 0), 0.1813, 4);
}

TEST_CASE("a dark rate becomes 1 - exp(-R t) per gate for a threshold counter and R t for a resolving one") {
  // Poisson process of rate R over a gate t: mean R t counts, probability 1 - e^{-R t} of at
  // least one (closed form). R = 2e5 /s, t = 1 us: R t = 0.2.
  auto counter_of = [](const char* kind) {
    const std::string text = std::string("title = \"c\"\n[source]\nfrequency_ghz = 5.0\nsqueezing_db = 3.0\n"
                                         "bandwidth_mhz = 1.0\n[link]\n[link.direct]\n"
                                         "a = { transmissivity = 1.0, bath_photons = 0.0 }\n"
                                         "b = { transmissivity = 1.0, bath_photons = 0.0 }\n"
                                         "[counters.c]\nkind = \"") +
                             kind +
                             "\"\nefficiency = 1.0\ndark_rate_hz = 2e5\ngate_ns = 1000.0\n"
                             "[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n";
    return scenario::parse(text, "<test>").counters.at(0);
  };
  CHECK(counter_of("threshold").dark_per_gate.first() == doctest::Approx(-std::expm1(-0.2)).epsilon(1e-14));
  CHECK(counter_of("resolving").dark_per_gate.first() == doctest::Approx(0.2).epsilon(1e-14));
  check_printed(counter_of("threshold").dark_per_gate.first(), 0.1813, 4);
}

// -------------------------------------------------------------- what the physics says

TEST_CASE("README: one-sided subtraction on a TMSV of r = 0.5 raises E_N and lowers F; a strong tap lowers both") {
  const std::string text =
      bench(r_half_db, protocol("ideal one", "{ tap = \"a\", transmissivity = 0.99999, counter = \"pnr\" }") +
                           protocol("one 0.9", "{ tap = \"a\", transmissivity = 0.9, counter = \"ideal\" }") +
                           protocol("one 0.5", "{ tap = \"a\", transmissivity = 0.5, counter = \"ideal\" }"));
  const sweep::Probe p = sweep::probe(scenario::parse(text, "<test>"));
  // Bare TMSV: E_N = 2r / ln 2, F = 1 / (1 + e^{-2r}) (docs/physics.md §6.3, §7.4).
  check_printed(p.link.log_negativity, 1.4427, 4);
  CHECK(p.link.log_negativity == doctest::Approx(1.0 / std::log(2.0)).epsilon(1e-12));
  check_printed(p.link.fidelity, 0.7311, 4);
  CHECK(p.link.fidelity == doctest::Approx(1.0 / (1.0 + std::exp(-1.0))).epsilon(1e-12));

  // Ideal one-sided subtraction (T -> 1, eta = 1, no dark counts): a |TMSV> = l b^dagger |TMSV>,
  // the pure Schmidt state sum_n c_n |n-1, n>, c_n ∝ l^n sqrt(n). Closed form of E_N for a pure
  // Schmidt state: log2 (sum c_n)^2 / sum c_n^2 (docs/physics.md §6.1). Its fidelity by the radial
  // quadrature (a different algorithm from the EPR-operator trace the evaluator uses, §7.3) on
  // the state built from that closed form. T = 0.99999 differs from the limit by O(1 - T).
  const double l = std::tanh(0.5);
  double sum = 0.0, sum2 = 0.0;
  const int n_max = 60;
  fock::SectorState psi(n_max);
  for (int n = 1; n <= n_max; ++n) {
    sum += std::pow(l, n) * std::sqrt(n);
    sum2 += std::pow(l, 2 * n) * n;
  }
  for (int n = 1; n <= n_max; ++n)
    for (int m = 1; m <= n_max; ++m)
      psi.set(n - 1, n, m - 1, m, std::pow(l, n + m) * std::sqrt(double(n) * m) / sum2);
  const double en_limit = std::log2(sum * sum / sum2);
  const double f_limit = measures::fidelity_radial(psi);
  const point::PointResult& ideal = row(p, "ideal one");
  CHECK(ideal.log_negativity == doctest::Approx(en_limit).epsilon(1e-4));
  CHECK(ideal.fidelity == doctest::Approx(f_limit).epsilon(1e-4));
  check_printed(ideal.log_negativity, 1.8628, 4);
  check_printed(ideal.fidelity, 0.5344, 4);
  check_printed(f_limit, 0.5344, 4);

  // A T = 0.9 threshold tap (check values of docs/physics.md §4.5, an independent numpy
  // computation): E_N 1.722860, F 0.513337.
  const point::PointResult& t09 = row(p, "one 0.9");
  CHECK(t09.log_negativity == doctest::Approx(1.722860).epsilon(1e-6));
  CHECK(t09.fidelity == doctest::Approx(0.513337).epsilon(1e-6));
  check_printed(t09.log_negativity, 1.7229, 4);
  check_printed(t09.fidelity, 0.5133, 4);

  // A strong tap (T = 0.5) loses more to its own loss than subtraction gains.
  const point::PointResult& t05 = row(p, "one 0.5");
  CHECK(t05.log_negativity < p.link.log_negativity);
  check_printed(t05.log_negativity, 1.134, 3);
  check_printed(t05.fidelity, 0.421, 3);
}

TEST_CASE("README: two-sided subtraction raises E_N and F at 0.5 squeezing but lowers both at 10 dB with T = 0.9") {
  const std::string both09 = "{ tap = \"a\", transmissivity = 0.9, counter = \"ideal\" }, "
                             "{ tap = \"b\", transmissivity = 0.9, counter = \"ideal\" }";
  const std::string both099 = "{ tap = \"a\", transmissivity = 0.99, counter = \"ideal\" }, "
                              "{ tap = \"b\", transmissivity = 0.99, counter = \"ideal\" }";
  {
    const sweep::Probe p = sweep::probe(scenario::parse(bench(r_half_db, protocol("both", both09)), "<test>"));
    // docs/physics.md §4.5 check values (independent numpy computation): E_N 1.929838, F 0.793739.
    const point::PointResult& r = row(p, "both");
    CHECK(r.log_negativity == doctest::Approx(1.929838).epsilon(1e-6));
    CHECK(r.fidelity == doctest::Approx(0.793739).epsilon(1e-6));
    check_printed(r.log_negativity, 1.9298, 4);
    check_printed(r.fidelity, 0.7937, 4);
  }
  {
    const sweep::Probe p = sweep::probe(scenario::parse(
        bench("10.0", protocol("both 0.9", both09) + protocol("both 0.99", both099)), "<test>"));
    // Bare 10 dB TMSV: E_N = 2r/ln 2 = log2(10) = 3.3219, F = 1/(1 + 10^{-1}) = 0.9091 (closed forms).
    CHECK(p.link.log_negativity == doctest::Approx(std::log2(10.0)).epsilon(1e-12));
    CHECK(p.link.fidelity == doctest::Approx(1.0 / 1.1).epsilon(1e-12));
    check_printed(p.link.log_negativity, 3.322, 3);
    check_printed(p.link.fidelity, 0.909, 3);
    const point::PointResult& t09 = row(p, "both 0.9");
    check_printed(t09.log_negativity, 3.104, 3);
    check_printed(t09.fidelity, 0.876, 3);
    CHECK(t09.log_negativity < p.link.log_negativity);
    CHECK(t09.fidelity < p.link.fidelity);
    const point::PointResult& t099 = row(p, "both 0.99");
    check_printed(t099.log_negativity, 4.148, 3);
    check_printed(t099.fidelity, 0.925, 3);
    check_printed(t09.success_probability, 0.059, 3);
    check_printed(t099.success_probability, 9.6e-4, 5);
  }
}

TEST_CASE("README: dark counts set the success probability's floor at p one-sided and p^2 two-sided as T -> 1") {
  // docs/physics.md §4.3: the k = 0 term of weight p keeps the unsubtracted state; with
  // T = 0.99999 the subtraction term adds (1 - T) <n> = 1e-5 x 0.27 to p (closed form of the
  // one-sided probability, §4.4: P = 1 - (1 - p) G(y, 1), G(y, 1) = (1 - l^2)/(1 - l^2 y)).
  const std::string text = bench(
      r_half_db, protocol("one", "{ tap = \"a\", transmissivity = 0.99999, counter = \"dark\" }") +
                     protocol("both", "{ tap = \"a\", transmissivity = 0.99999, counter = \"dark\" }, "
                                      "{ tap = \"b\", transmissivity = 0.99999, counter = \"dark\" }"));
  const sweep::Probe p = sweep::probe(scenario::parse(text, "<test>"));
  const double l2 = std::tanh(0.5) * std::tanh(0.5), y = 1.0 - (1.0 - 0.99999);
  const double p_one = 1.0 - (1.0 - 1e-3) * (1.0 - l2) / (1.0 - l2 * y);
  CHECK(row(p, "one").success_probability == doctest::Approx(p_one).epsilon(1e-9));
  check_printed(row(p, "one").success_probability, 1.003e-3, 6);
  check_printed(row(p, "both").success_probability, 1.005e-6, 9);
  check_printed(row(p, "one").false_herald_fraction, 0.997, 3);
}

TEST_CASE("README: open air at 5.4 GHz keeps entanglement to 5.38 m with 1.2 m dishes and 1.35 m with 0.6 m") {
  // Goubau coupling T = 1 - exp(-tau^2), tau = sqrt(A_t A_r)/(lambda d) (docs/physics.md §12.3),
  // and a TMSV with loss on one mode stays entangled iff (1 - T) n < T (§2.5), i.e.
  // exp(-tau^2) < 1/(n + 1) with n the Planck occupation of the 15 °C air (the scenario's default
  // temperature): d < A / (lambda sqrt(ln(n + 1))), A = 0.7 pi D^2 / 4 (closed form, without the
  // air's absorption, which adds ~1e-5 dB here).
  for (const auto& [diameter, quoted] : {std::tuple{"1.2", 5.38}, std::tuple{"0.6", 1.35}}) {
    const std::string text = std::string("title = \"dish\"\n[source]\nfrequency_ghz = 5.4\nsqueezing_db = 6.0\n"
                                         "bandwidth_mhz = 1.0\n[link]\nmedium = \"air\"\n"
                                         "distance_m = { from = 0.5, to = 8.0, points = 16 }\n"
                                         "[link.antenna]\ndiameter_m = ") +
                             diameter + "\naperture_efficiency = 0.7\n[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n";
    const scenario::Scenario sc = scenario::parse(text, "<test>");
    const point::BareCrossings x = point::bare_crossings(sweep::source_of(sc), sc.link.model, sc.link.distances_m);
    REQUIRE(x.survival.kind == Crossing::Kind::crossed);
    check_printed(x.survival.distance, quoted, 2);
    const double lambda = 299792458.0 / 5.4e9, d = std::stod(diameter);
    const double area = 0.7 * std::numbers::pi * d * d / 4.0;
    const double n = link::planck_occupation(5.4e9, 288.15);
    const double tau_needed = std::sqrt(std::log(n + 1.0));  // exp(-tau^2) = 1/(n+1)
    const double closed = area / (tau_needed * lambda);
    check_printed(closed, quoted, 2);
    CHECK(x.survival.distance == doctest::Approx(closed).epsilon(1e-3));
  }
}

TEST_CASE("README: spillover at 290 K shortens the 1.2 m dish link to 5.28 m at 1e-4 and breaks it at 2 %") {
  // Each spillover stage is a beam splitter with a thermal port at 290 K (docs/physics.md §2.1,
  // §12.5); with 2e-2 per antenna they add s n ~ 44 photons against the ~1 a one-way link
  // tolerates (§2.5), so no distance is entangled (the table of docs/hardware.md §2).
  auto survival = [](const char* spill) {
    const std::string text = std::string("title = \"dish\"\n[source]\nfrequency_ghz = 5.4\nsqueezing_db = 6.0\n"
                                         "bandwidth_mhz = 1.0\n[link]\nmedium = \"air\"\n"
                                         "distance_m = { from = 0.5, to = 8.0, points = 16 }\n"
                                         "[link.antenna]\ndiameter_m = 1.2\naperture_efficiency = 0.7\n"
                                         "spillover_temperature_k = 290.0\nspillover_loss = ") +
                             spill + "\n[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n";
    const scenario::Scenario sc = scenario::parse(text, "<test>");
    return point::bare_crossings(sweep::source_of(sc), sc.link.model, sc.link.distances_m).survival;
  };
  const Crossing small = survival("1e-4");
  REQUIRE(small.kind == Crossing::Kind::crossed);
  check_printed(small.distance, 5.28, 2);
  // 2 %: 2 x 0.02 x n(5.4 GHz, 290 K) photons at d = 0, n = 1118.5 (Planck, §2.4).
  CHECK(2.0 * 0.02 * link::planck_occupation(5.4e9, 290.0) > 1.0);
  CHECK(survival("2e-2").kind == Crossing::Kind::never_positive);
}

TEST_CASE("README: a heralded stage after an entanglement-breaking channel leaves E_N = 0") {
  // Mode b through tau = 0.5 with n_E = 2: (1 - tau) n_E = 1 >= tau, entanglement breaking
  // (Holevo, Probl. Inf. Transm. 44, 171 (2008), from memory; docs/physics.md §2.5), so the state
  // is separable (Simon, PRL 84, 2726 (2000): the Gaussian criterion (a-1)(b-1) >= c^2) and stays
  // separable under the local taps and counters, computed here in Fock space.
  std::string text = bench(r_half_db, protocol("both", "{ tap = \"a\", transmissivity = 0.9, counter = \"ideal\" }, "
                                                       "{ tap = \"b\", transmissivity = 0.9, counter = \"ideal\" }") +
                                          protocol("two counts", "{ tap = \"b\", transmissivity = 0.9, counter = \"pnr\", counts = 2 }"));
  const std::string lossless_b = "b = { transmissivity = 1.0, bath_photons = 0.0 }";
  text.replace(text.find(lossless_b), lossless_b.size(), "b = { transmissivity = 0.5, bath_photons = 2.0 }");
  const sweep::Probe p = sweep::probe(scenario::parse(text, "<test>"));
  const gaussian::StandardForm& st = p.link.state;
  CHECK((st.a - 1.0) * (st.b - 1.0) >= st.c * st.c);
  CHECK(p.link.log_negativity == 0.0);
  for (const char* name : {"both", "two counts"}) {
    CAPTURE(name);
    const point::PointResult& r = row(p, name);
    REQUIRE(has_figures(r.status));
    CHECK(r.success_probability > 0.0);
    CHECK(std::abs(r.log_negativity) < 1e-9);
    CHECK(r.negativity < 1e-9);
  }
  check_printed(row(p, "both").success_probability, 0.0040, 4);
}

// ---------------------------------------------------------------------------- the relay

namespace {

// The one-end unit-gain swap: Bell measurement on B1, B2 (x of (B1 - B2)/sqrt 2, p of
// (B1 + B2)/sqrt 2), mode A2 displaced by the outcomes with unit gain and no conditioning:
// x_A2 + (x_B1 - x_B2), p_A2 + (p_B1 + p_B2) (van Loock & Braunstein, PRA 61, 010302(R) (2000),
// unconditional feed-forward). The output CM is M V M^T of the four-mode CM.
gaussian::Covariance unit_gain_one_end(const gaussian::StandardForm& arm) {
  const gaussian::Covariance pair = gaussian::covariance(arm);  // (x_A, p_A, x_B, p_B)
  Eigen::Matrix<double, 8, 8> v = Eigen::Matrix<double, 8, 8>::Zero();
  v.block<4, 4>(0, 0) = pair;  // A1, B1
  v.block<4, 4>(4, 4) = pair;  // A2, B2
  Eigen::Matrix<double, 4, 8> m = Eigen::Matrix<double, 4, 8>::Zero();
  m(0, 0) = 1.0;  // x_A1
  m(1, 1) = 1.0;  // p_A1
  m(2, 4) = 1.0; m(2, 2) = 1.0; m(2, 6) = -1.0;  // x_A2 + x_B1 - x_B2
  m(3, 5) = 1.0; m(3, 3) = 1.0; m(3, 7) = 1.0;   // p_A2 + p_B1 + p_B2
  return m * v * m.transpose();
}

std::string hot_line(const char* loss_db_per_m) {
  return std::string("title = \"300 K line\"\n[source]\nfrequency_ghz = 6.0\nsqueezing_db = 6.0\n"
                     "thermal_photons = 0.01\nbandwidth_mhz = 1.0\n[link]\nmedium = \"line\"\ndistance_m = 20.0\n"
                     "[link.line]\nloss_db_per_m = ") +
         loss_db_per_m + "\ntemperature_k = 300.0\n[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n";
}

}  // namespace

TEST_CASE("the relay baseline is the conditional state with both ends corrected, above one-end unit-gain swapping") {
  // 6 GHz, 6 dB, 0.01 thermal photons, 20 m of line at 300 K with 1.5e-4 dB/m: each arm is
  // 10 m, tau = 10^{-1.5e-3/10}, n_E = Planck(6 GHz, 300 K) = 1041.33.
  const scenario::Scenario sc = scenario::parse(hot_line("1.5e-4"), "<test>");
  const sweep::Probe p = sweep::probe(sc);
  REQUIRE(p.link.relay_log_negativity.has_value());
  const link::Channel arm_channel{std::pow(10.0, -1.5e-3 / 10.0), link::planck_occupation(6e9, 300.0)};
  const gaussian::StandardForm arm =
      gaussian::apply(gaussian::tmst(squeezing_parameter_from_db(6.0), 0.01), Mode::B, arm_channel);
  // Conditional state of an ideal Bell measurement (docs/physics.md §9.1): a' = a - c^2/(2b),
  // c' = c^2/(2b) for identical arms.
  const gaussian::StandardForm relay{arm.a - arm.c * arm.c / (2.0 * arm.b), arm.a - arm.c * arm.c / (2.0 * arm.b),
                                     arm.c * arm.c / (2.0 * arm.b)};
  CHECK(*p.link.relay_log_negativity == doctest::Approx(-std::log2(gaussian::smallest_pt_symplectic(relay))).epsilon(1e-10));
  CHECK(*p.link.relay_fidelity == doctest::Approx(2.0 / (2.0 + 2.0 * relay.a - 2.0 * relay.c)).epsilon(1e-12));
  const gaussian::Covariance one_end = unit_gain_one_end(arm);
  const double one_end_en = std::max(0.0, -std::log2(gaussian::smallest_pt_symplectic(one_end)));
  const double one_end_f = gaussian::fidelity(one_end);
  CHECK(one_end_en < *p.link.relay_log_negativity);
  CHECK(one_end_f < *p.link.relay_fidelity);
  // The README's figures.
  check_printed(p.link.log_negativity, 0.2442, 4);
  check_printed(p.link.fidelity, 0.5062, 4);
  check_printed(*p.link.relay_log_negativity, 0.1500, 4);
  check_printed(*p.link.relay_fidelity, 0.5260, 4);
  check_printed(one_end_en, 0.0052, 4);
  check_printed(one_end_f, 0.4481, 4);
}

TEST_CASE("README: the relay keeps teleportation above 1/2 where the bare link has fallen below it") {
  const sweep::Probe p = sweep::probe(scenario::parse(hot_line("2e-4"), "<test>"));
  CHECK(p.link.fidelity < 0.5);
  CHECK(*p.link.relay_fidelity > 0.5);
  check_printed(p.link.fidelity, 0.4514, 4);
  check_printed(*p.link.relay_fidelity, 0.5005, 4);
  check_printed(p.link.log_negativity, 0.0182, 4);
  check_printed(*p.link.relay_log_negativity, 0.0029, 4);
}
