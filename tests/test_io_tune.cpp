// heraldry tune: the optimiser against a closed form and against brute-force grids evaluated
// here (a different algorithm), constraints, and the input errors of the tune syntax.
#include <doctest/doctest.h>

#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string>
#include <vector>

#include "heraldry/link.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/tune.hpp"

using namespace heraldry;

namespace {

std::string number(double x) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", x);
  return buf;
}

// A cryogenic line at 0 K (pure loss) with a threshold counter; `squeezing` and `protocol` are
// spliced in as written.
std::string line_scenario(const std::string& squeezing, const std::string& protocols, double loss_db_per_m,
                          double tolerance) {
  return "title = \"tune test\"\n[source]\nfrequency_ghz = 6.0\nsqueezing_db = " + squeezing +
         "\nbandwidth_mhz = 1.0\n[link]\nmedium = \"line\"\ndistance_m = 1.0\n[link.line]\nloss_db_per_m = " +
         number(loss_db_per_m) + "\ntemperature_k = 0.0\n"
         "[counters.lab]\nkind = \"threshold\"\nefficiency = 0.5\ndark_per_gate = 1e-4\n" +
         protocols + "[numerics]\ntolerance = " + number(tolerance) + "\n";
}

// Two-sided threshold subtraction with the tap on mode b written as given.
std::string subtraction(const std::string& tap_b) {
  return "[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n"
         "[[protocol]]\nname = \"both\"\nsteps = [\"link\", { tap = \"a\", transmissivity = 0.9, counter = \"lab\" }, "
         "{ tap = \"b\", transmissivity = " + tap_b + ", counter = \"lab\" }]\n";
}

// 1 dB/m over the 1 m of line: tau = 10^(-0.1) = 0.794.
constexpr double one_db = 1.0;

}  // namespace

TEST_CASE("tuning the squeezing of a bare pure-loss link for fidelity finds the closed-form optimum") {
  // Pure loss tau = 0.5: 10 log10(2) dB over 1 m, at 0 K.
  const double db_per_m = 10.0 * std::log10(2.0);
  const scenario::Scenario sc = scenario::parse(
      line_scenario("{ tune = [3.0, 12.0] }", "[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n", db_per_m, 1e-7),
      "closed_form.toml");
  const double tau = link::link_budget(sc.link.model, 1.0).b.channel.transmissivity;
  REQUIRE(tau == doctest::Approx(0.5).epsilon(1e-6));
  CHECK(link::link_budget(sc.link.model, 1.0).b.channel.bath_photons == 0.0);

  tune::Options o;
  o.protocol = "bare";
  o.objective = tune::Objective::fidelity;
  const tune::Result r = tune::run(sc, o);
  REQUIRE(r.feasible);
  REQUIRE(r.knobs.size() == 1);
  CHECK(r.knobs[0].name == "source.squeezing_db");

  // Closed form: F = 2 / (2 + a + b - 2c), a = cosh 2r, b = tau cosh 2r + 1 - tau,
  // c = sqrt(tau) sinh 2r (Braunstein & Kimble, PRL 80, 869 (1998); standard-form expression of
  // docs/physics.md §7.4). d(a + b - 2c)/dr = 0 gives tanh 2r* = 2 sqrt(tau) / (1 + tau).
  const double r_star = 0.5 * std::atanh(2.0 * std::sqrt(tau) / (1.0 + tau));
  const double db_star = squeezing_db_from_parameter(r_star);
  CHECK(db_star == doctest::Approx(7.66).epsilon(1e-3));
  CHECK(std::abs(r.best[0] - db_star) < 0.02);
  const double c2 = std::cosh(2.0 * r_star), s2 = std::sinh(2.0 * r_star);
  const double f_star = 2.0 / (2.0 + c2 + tau * c2 + 1.0 - tau - 2.0 * std::sqrt(tau) * s2);
  CHECK(r.at_best.fidelity == doctest::Approx(f_star).epsilon(1e-5));
  // The bare link's Gaussian figures at the optimum are the same closed form.
  CHECK(r.bare_fidelity == doctest::Approx(f_star).epsilon(1e-5));
  // The optimum is a maximum: both +-5 % neighbours are lower (closed form: F is unimodal in r).
  REQUIRE(r.sensitivity.size() == 1);
  CHECK(r.sensitivity[0].minus_objective < r.at_best.objective);
  CHECK(r.sensitivity[0].plus_objective < r.at_best.objective);
}

TEST_CASE("a tap tuned for rate matches the best of a 60-point brute-force grid") {
  const scenario::Scenario sc =
      scenario::parse(line_scenario("3.0", subtraction("{ tune = [0.05, 0.99] }"), one_db, 1e-6), "rate.toml");
  tune::Options o;
  o.protocol = "both";
  o.objective = tune::Objective::rate;
  const tune::Result r = tune::run(sc, o);
  REQUIRE(r.feasible);
  REQUIRE(r.knobs.size() == 1);
  CHECK(r.knobs[0].name == "tap_b.transmissivity");

  // Independent computation: every point of a dense grid, the best one kept (a different
  // algorithm from the scan + Brent search under test).
  constexpr int n = 60;
  const double lo = 0.05, hi = 0.99, h = (hi - lo) / (n - 1);
  double best_x = 0.0, best = -std::numeric_limits<double>::infinity();
  for (int i = 0; i < n; ++i) {
    const std::vector<double> x{lo + h * i};
    const tune::Figures f = tune::evaluate_at(sc, o, 1, 1.0, r.knobs, x);
    if (f.feasible && f.objective > best) {
      best = f.objective;
      best_x = x[0];
    }
  }
  REQUIRE(std::isfinite(best));
  CHECK(best_x > lo);  // an interior optimum: the test is not decided by a range end
  CHECK(best_x < hi);
  CHECK(std::abs(r.best[0] - best_x) <= h);
  CHECK(std::abs(r.at_best.objective - best) <= 1e-3 * best);
  CHECK(r.at_best.objective >= best * (1.0 - 1e-9));
  // rate = trial rate x P x E_N; the trial rate is min(1 MHz, 1 / 1 us) = 1e6 /s (common practice).
  CHECK(r.at_best.heralding_rate_hz == doctest::Approx(1e6 * r.at_best.success_probability).epsilon(1e-12));
  CHECK(r.at_best.objective ==
        doctest::Approx(r.at_best.heralding_rate_hz * r.at_best.log_negativity).epsilon(1e-12));
}

TEST_CASE("a tap and the squeezing tuned together match a brute-force grid, and a rate floor moves the optimum onto it") {
  const scenario::Scenario sc = scenario::parse(
      line_scenario("{ tune = [1.0, 5.0] }", subtraction("{ tune = [0.05, 0.99] }"), one_db, 1e-6), "two.toml");
  tune::Options o;
  o.protocol = "both";
  o.objective = tune::Objective::rate;
  const tune::Result r = tune::run(sc, o);
  REQUIRE(r.feasible);
  REQUIRE(r.knobs.size() == 2);
  CHECK(r.knobs[0].name == "source.squeezing_db");
  CHECK(r.knobs[1].name == "tap_b.transmissivity");

  // Independent computation: a 9 x 25 grid evaluated point by point.
  constexpr int ns = 9, nt = 25;
  const double hs = 4.0 / (ns - 1), ht = 0.94 / (nt - 1);
  double best = -std::numeric_limits<double>::infinity();
  std::vector<double> best_x(2);
  for (int i = 0; i < ns; ++i)
    for (int j = 0; j < nt; ++j) {
      const std::vector<double> x{1.0 + hs * i, 0.05 + ht * j};
      const tune::Figures f = tune::evaluate_at(sc, o, 1, 1.0, r.knobs, x);
      if (f.feasible && f.objective > best) {
        best = f.objective;
        best_x = x;
      }
    }
  REQUIRE(std::isfinite(best));
  CHECK(std::abs(r.best[0] - best_x[0]) <= hs);
  CHECK(std::abs(r.best[1] - best_x[1]) <= ht);
  CHECK(r.at_best.objective >= best * (1.0 - 1e-9));
  CHECK(r.at_best.objective <= best * (1.0 + 1e-2));

  // A floor 40 % above the unconstrained optimum's rate excludes it; the constrained optimum
  // lies on the floor (the objective rises as the tap lets more light through, i.e. as the rate
  // falls, so the best feasible point is where the floor binds).
  tune::Options c = o;
  c.min_rate_hz = 1.4 * r.at_best.heralding_rate_hz;
  const tune::Result rc = tune::run(sc, c);
  REQUIRE(rc.feasible);
  CHECK(rc.at_best.heralding_rate_hz >= *c.min_rate_hz);
  CHECK(rc.at_best.heralding_rate_hz <= *c.min_rate_hz * (1.0 + 1e-3));
  CHECK(rc.at_best.objective < r.at_best.objective);
  // It is at least as good as every feasible point of the grid above (brute force).
  double best_c = -std::numeric_limits<double>::infinity();
  for (int i = 0; i < ns; ++i)
    for (int j = 0; j < nt; ++j) {
      const std::vector<double> x{1.0 + hs * i, 0.05 + ht * j};
      best_c = std::max(best_c, tune::evaluate_at(sc, c, 1, 1.0, r.knobs, x).objective);
    }
  REQUIRE(std::isfinite(best_c));
  CHECK(rc.at_best.objective >= best_c * (1.0 - 1e-9));
}

TEST_CASE("a tunable parameter takes the midpoint of its range in every other command") {
  const scenario::Scenario sc = scenario::parse(
      line_scenario("{ tune = [2.0, 8.0] }", subtraction("{ tune = [0.8, 0.9] }"), one_db, 1e-6), "mid.toml");
  // Closed form: (lo + hi) / 2.
  CHECK(sc.source.squeezing_r == doctest::Approx(squeezing_parameter_from_db(5.0)).epsilon(1e-15));
  REQUIRE(sc.source.squeezing_r_tune.has_value());
  CHECK(sc.source.squeezing_r_tune->first == doctest::Approx(squeezing_parameter_from_db(2.0)).epsilon(1e-15));
  const auto& t = sc.protocols[1].steps[2].param("transmissivity");
  REQUIRE(t.values.size() == 1);
  CHECK(t.values[0] == doctest::Approx(0.85).epsilon(1e-15));
  REQUIRE(t.tune.has_value());
  CHECK(t.tune->second == 0.9);
  // A loss in dB is tuned as its transmissivity 10^(-dB/10) (closed form), ends swapped.
  const scenario::Scenario l = scenario::parse(
      line_scenario("3.0", "[[protocol]]\nname = \"l\"\nsteps = [\"link\", { loss = \"b\", loss_db = { tune = [1.0, 3.0] } }]\n",
                    one_db, 1e-6),
      "loss.toml");
  const auto& lt = l.protocols[0].steps[1].param("transmissivity");
  REQUIRE(lt.tune.has_value());
  CHECK(lt.tune->first == doctest::Approx(std::pow(10.0, -0.3)).epsilon(1e-14));
  CHECK(lt.tune->second == doctest::Approx(std::pow(10.0, -0.1)).epsilon(1e-14));
}

TEST_CASE("tune refuses an unknown protocol, one with nothing to tune, and bad options with exact messages") {
  const scenario::Scenario sc =
      scenario::parse(line_scenario("3.0", subtraction("0.9"), one_db, 1e-6), "fixed.toml");
  tune::Options o;
  o.objective = tune::Objective::rate;
  o.protocol = "bothh";
  CHECK_THROWS_WITH_AS(tune::run(sc, o),
                       "--protocol: key '--protocol' = \"bothh\": expected the name of a protocol of the scenario: "
                       "\"bare\", \"both\" (did you mean \"both\"?)",
                       InputError);
  o.protocol = "both";
  CHECK_THROWS_WITH_AS(tune::run(sc, o),
                       "fixed.toml: key '--protocol' = \"both\": expected a protocol with a parameter written "
                       "{ tune = [lo, hi] } (its tunable keys: source.squeezing_db, "
                       "both:tap_a.transmissivity, both:tap_b.transmissivity)",
                       InputError);
  o.protocol = "bare";
  CHECK_THROWS_WITH_AS(tune::run(sc, o),
                       "fixed.toml: key '--protocol' = \"bare\": expected a protocol with a parameter written "
                       "{ tune = [lo, hi] } (its tunable keys: source.squeezing_db)",
                       InputError);
  CHECK_THROWS_WITH_AS(tune::objective_from_string("fidelty"),
                       "--objective: key '--objective' = \"fidelty\": expected \"fidelity\", \"log-negativity\" or "
                       "\"rate\" (did you mean \"fidelity\"?)",
                       InputError);
  const scenario::Scenario t =
      scenario::parse(line_scenario("3.0", subtraction("{ tune = [0.5, 0.9] }"), one_db, 1e-6), "t.toml");
  o.protocol = "both";
  o.min_rate_hz = -1.0;
  CHECK_THROWS_WITH_AS(tune::run(t, o), "--min-rate-hz: key '--min-rate-hz' = -1: expected a rate in Hz >= 0",
                       InputError);
  o.min_rate_hz.reset();
  o.max_false_herald_fraction = 1.5;
  CHECK_THROWS_WITH_AS(tune::run(t, o),
                       "--max-false-herald-fraction: key '--max-false-herald-fraction' = 1.5: expected a fraction in "
                       "[0, 1]",
                       InputError);
}

TEST_CASE("a constraint nothing in the ranges meets leaves the tuning without a feasible point") {
  const scenario::Scenario t =
      scenario::parse(line_scenario("3.0", subtraction("{ tune = [0.5, 0.9] }"), one_db, 1e-6), "t.toml");
  tune::Options o;
  o.protocol = "both";
  o.objective = tune::Objective::log_negativity;
  // The heralding rate is at most the trial rate, 1e6 /s (common practice: rate <= trials x 1).
  o.min_rate_hz = 2e6;
  const tune::Result r = tune::run(t, o);
  CHECK_FALSE(r.feasible);
  CHECK(r.sensitivity.empty());
}

TEST_CASE("heraldry tune on the shipped tuning scenario prints JSON and exits 3 when nothing is feasible") {
  const std::string scenario = std::string(HERALDRY_SOURCE_DIR) + "/protocols/tuning.toml";
  auto run_tool = [](const std::string& args, std::string& out) {
    const std::string cmd = std::string("\"") + HERALDRY_BINARY + "\" " + args + " 2>&1";
    FILE* pipe = ::popen(cmd.c_str(), "r");
    REQUIRE(pipe != nullptr);
    char buf[4096];
    std::size_t n;
    while ((n = std::fread(buf, 1, sizeof buf, pipe)) > 0) out.append(buf, n);
    const int status = ::pclose(pipe);
    return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  };
  std::string out;
  CHECK(run_tool("tune \"" + scenario + "\" --protocol \"subtract both\" --objective rate --json", out) == 0);
  CHECK(out.find("\"feasible\": true") != std::string::npos);
  CHECK(out.find("\"name\": \"tap_b.transmissivity\"") != std::string::npos);
  CHECK(out.find("nan") == std::string::npos);
  // The heralding rate is at most the trial rate min(2 MHz, 1 / 11 us) = 9.1e4 /s (common
  // practice), so a floor of 1e5 /s cannot be met.
  out.clear();
  CHECK(run_tool("tune \"" + scenario + "\" --protocol \"subtract both\" --objective rate --min-rate-hz 1e5", out) == 3);
  CHECK(out.find("no setting in the ranges meets the constraints") != std::string::npos);
  out.clear();
  CHECK(run_tool("tune \"" + scenario + "\" --protocol \"subtract both\" --objective speed", out) == 2);
}
