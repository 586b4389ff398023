// Counters and the Kraus sets of the heralded steps, checked without the Fock engine: counter
// response against closed forms, completeness of the outcome sets, and the scissors network
// against a brute-force three-mode simulation.
#include <cmath>
#include <doctest/doctest.h>

#include "heraldry/point.hpp"
#include "heraldry/steps.hpp"
#include "test_core_steps_support.hpp"

using namespace heraldry;
using namespace heraldry::steps;
using namespace heraldry::point;

namespace {
CounterModel threshold(double eta, double p) { return {CounterKind::threshold, eta, p, 1e-6, 0.0}; }
CounterModel resolving(double eta, double nu) { return {CounterKind::resolving, eta, nu, 1e-6, 0.0}; }
}  // namespace

TEST_CASE("a threshold counter clicks with probability 1 - (1-p)(1-eta)^k and its two readings sum to one") {
  // On/off model, Kitagawa, Takeoka, Sasaki & Chefles, PRA 73, 042310 (2006) (closed form).
  for (double eta : {0.0, 0.43, 1.0})
    for (double p : {0.0, 1e-4, 0.01})
      for (int k = 0; k <= 12; ++k) {
        const auto c = threshold(eta, p);
        const double click = reading_probability(c, 1, k), none = reading_probability(c, 0, k);
        CHECK(click == doctest::Approx(1.0 - (1.0 - p) * std::pow(1.0 - eta, k)).epsilon(1e-14));
        CHECK(click + none == doctest::Approx(1.0).epsilon(1e-15));
        // genuine part: the counter received at least one photon (k >= 1), whatever fired it
        CHECK(reading_probability(c, 1, k, Weighting::genuine) == (k >= 1 ? click : 0.0));
      }
}

TEST_CASE("a small click probability keeps its relative accuracy") {
  // 1 - (1-p)(1-eta)^k for p = 1e-12, k = 0: exactly p (closed form); naive 1 - (1 - p) loses digits.
  CHECK(reading_probability(threshold(0.5, 1e-12), 1, 0) == doctest::Approx(1e-12).epsilon(1e-12));
}

TEST_CASE("a resolving counter follows the binomial-Poisson convolution and its readings sum to one") {
  // P(1|k) = e^{-nu}[k eta (1-eta)^{k-1} + nu (1-eta)^k] (closed form of the one-count term);
  // nu = 0: binomial distribution C(k,j) eta^j (1-eta)^{k-j} (closed form).
  for (double eta : {0.3, 0.7, 1.0})
    for (double nu : {0.0, 0.01, 0.5})
      for (int k = 0; k <= 10; ++k) {
        const auto c = resolving(eta, nu);
        double sum = 0.0;
        for (int j = 0; j <= 60; ++j) sum += reading_probability(c, j, k);
        CHECK(sum == doctest::Approx(1.0).epsilon(1e-13));
        const double one = std::exp(-nu) * ((k > 0 ? k * eta * std::pow(1.0 - eta, k - 1) : 0.0) +
                                            nu * std::pow(1.0 - eta, k));
        CHECK(reading_probability(c, 1, k) == doctest::Approx(one).epsilon(1e-13));
        if (nu == 0.0)
          for (int j = 0; j <= k; ++j)
            CHECK(reading_probability(c, j, k) ==
                  doctest::Approx(std::tgamma(k + 1.0) / (std::tgamma(j + 1.0) * std::tgamma(k - j + 1.0)) *
                                  std::pow(eta, j) * std::pow(1.0 - eta, k - j)).epsilon(1e-12));
      }
}

TEST_CASE("a counter with zero efficiency: only dark counts fire it, genuine when photons reached it") {
  // A herald is genuine when the counter received at least as many photons as it reports (the
  // state underwent the subtraction), even if a dark count, not a photon, made the count.
  CHECK(reading_probability(threshold(0.0, 1e-3), 1, 5) == doctest::Approx(1e-3));
  CHECK(reading_probability(threshold(0.0, 1e-3), 1, 5, Weighting::genuine) == doctest::Approx(1e-3));
  CHECK(reading_probability(threshold(0.0, 1e-3), 1, 0, Weighting::genuine) == 0.0);
  CHECK(reading_probability(resolving(0.0, 0.1), 1, 5) == doctest::Approx(0.1 * std::exp(-0.1)));
  CHECK(reading_probability(resolving(0.0, 0.1), 1, 5, Weighting::genuine) == doctest::Approx(0.1 * std::exp(-0.1)));
  CHECK(reading_probability(resolving(0.0, 0.1), 2, 1, Weighting::genuine) == 0.0);  // 2 counts, 1 photon
}

TEST_CASE("the per-gate dark probability of a rate is 1 - exp(-R t)") {
  // Poisson arrivals (closed form): 85 /s over 10 us -> 8.4964e-4; 1400 /s over 10 us -> 1.39e-2.
  CHECK(dark_probability(85.0, 10e-6) == doctest::Approx(-std::expm1(-85.0 * 10e-6)).epsilon(1e-15));
  CHECK(dark_probability(85.0, 10e-6) == doctest::Approx(8.4964e-4).epsilon(1e-4));
  CHECK(dark_probability(1400.0, 10e-6) == doctest::Approx(1.39e-2).epsilon(3e-3));
  CHECK_THROWS_AS(dark_probability(-1.0, 1e-6), InputError);
}

TEST_CASE("the trial rate is bounded by the bandwidth and by every counter's gate plus dead time") {
  // common practice: a counter is re-armed after gate + reset
  const CounterModel slow{CounterKind::threshold, 0.5, 0.0, 1e-6, 9e-6};   // 100 kHz
  const CounterModel fast{CounterKind::threshold, 0.5, 0.0, 1e-7, 0.0};    // 10 MHz
  CHECK(trial_rate_hz(2e6, {}) == doctest::Approx(2e6));
  CHECK(trial_rate_hz(2e6, {fast}) == doctest::Approx(2e6));
  CHECK(trial_rate_hz(2e6, {fast, slow}) == doctest::Approx(1e5));
  const std::vector<StepSpec> steps = {make("link"), make("tap", Mode::B, {{"transmissivity", 0.9}}, 1),
                                       make("tap", Mode::A, {{"transmissivity", 0.9}}, 1)};
  CHECK(counters_used(steps, {fast, slow}).size() == 1);
  CHECK(trial_rate_hz(2e6, counters_used(steps, {fast, slow})) == doctest::Approx(1e5));
}

TEST_CASE("invalid counters and readings are input errors") {
  CHECK_THROWS_AS(validate(threshold(1.2, 0.0), "lab"), InputError);
  // A dark-click probability is in [0, 1] (p = 1: a click on every gate, see test_core_extremes.cpp).
  CHECK_THROWS_AS(validate(threshold(0.5, 1.0 + 1e-12), "lab"), InputError);
  CHECK_THROWS_AS(validate(threshold(0.5, -1e-12), "lab"), InputError);
  CHECK_THROWS_AS(reading_probability(threshold(0.5, 0.0), 2, 3), InputError);
  CHECK_THROWS_AS(reading_probability(resolving(0.5, 0.0), -1, 3), InputError);
  CHECK_THROWS_AS(tap_operation(1.5, threshold(0.5, 0.0), 1, 5), InputError);
}

TEST_CASE("tap Kraus operators are the pure-loss operators and click plus no-click is complete") {
  // <n-k|A_k|n> = sqrt(C(n,k) T^{n-k} (1-T)^k) (closed form); sum over readings of
  // sum_k K_k^T K_k = sum_k A_k^T A_k = I.
  const int cutoff = 20;
  for (double t : {0.0, 0.3, 0.95, 1.0}) {
    const auto c = threshold(0.6, 1e-3);
    const auto click = tap_operation(t, c, 1, cutoff), none = tap_operation(t, c, 0, cutoff);
    const auto s1 = steps_test::survival(click, cutoff), s0 = steps_test::survival(none, cutoff);
    for (int n = 0; n <= cutoff; ++n) CHECK(s1[n] + s0[n] == doctest::Approx(1.0).epsilon(1e-14));
  }
  // ideal counter, one count: only k = 1 survives: coefficient sqrt(n T^{n-1} (1-T)).
  const auto one = tap_operation(0.9, resolving(1.0, 0.0), 1, cutoff);
  REQUIRE(one.kraus.size() == 1);
  CHECK(one.kraus[0].shift == -1);
  for (int n = 1; n <= cutoff; ++n)
    CHECK(one.kraus[0].coeff[n] == doctest::Approx(std::sqrt(n * std::pow(0.9, n - 1) * 0.1)).epsilon(1e-14));
}

TEST_CASE("heralded addition with one idler photon is tanh(s) a^dagger cosh(s)^-(n+1)") {
  // K_add = tanh(s) a^dagger (cosh s)^{-(n+1)} (closed form of the two-mode squeezer with a
  // vacuum idler and one idler photon; quantum-limited amplifier of gain cosh^2 s).
  const int cutoff = 15;
  const double s = 0.4;
  const auto op = add_operation(s, resolving(1.0, 0.0), 1, cutoff);
  REQUIRE(op.kraus.size() == 1);
  CHECK(op.kraus[0].shift == 1);
  for (int n = 0; n <= cutoff; ++n)
    CHECK(op.kraus[0].coeff[n] ==
          doctest::Approx(std::tanh(s) * std::sqrt(n + 1.0) * std::pow(std::cosh(s), -(n + 1.0))).epsilon(1e-13));
}

TEST_CASE("heralded addition conserves probability over click and no-click, tail included") {
  // sum_k B_k^T B_k = I for the quantum-limited amplifier (closed form), including the k > N tail
  // that the operation lumps into one operator.
  for (double s : {0.1, 0.8, 1.5})
    for (int cutoff : {3, 12}) {
      const auto c = threshold(0.7, 0.01);
      const auto s1 = steps_test::survival(add_operation(s, c, 1, cutoff), cutoff);
      const auto s0 = steps_test::survival(add_operation(s, c, 0, cutoff), cutoff);
      for (int n = 0; n <= cutoff; ++n) CHECK(s1[n] + s0[n] == doctest::Approx(1.0).epsilon(1e-13));
    }
}

TEST_CASE("the physical noiseless amplifier is the largest contraction proportional to g^n") {
  // K = g^{n-N} Pi_N (closed form): K^T K <= I with equality at n = N.
  const auto op = amplify_operation(1.5, 6, 10);
  REQUIRE(op.kraus.size() == 1);
  for (int n = 0; n <= 10; ++n)
    CHECK(op.kraus[0].coeff[n] == doctest::Approx(n <= 6 ? std::pow(1.5, n - 6) : 0.0).epsilon(1e-15));
  const auto ideal = amplify_operation(1.5, 0, 8);  // N = the cutoff
  CHECK(ideal.kraus[0].coeff[8] == doctest::Approx(1.0));
  const auto attenuator = amplify_operation(0.5, 0, 8);  // g <= 1: g^n itself
  CHECK(attenuator.kraus[0].coeff[3] == doctest::Approx(0.125));
}

TEST_CASE("ideal scissors apply T_plus = sqrt((1-kappa)/2)(|0><0| + g|1><1|) to both corrected outcomes") {
  // Pegg, Phillips & Barnett, PRL 81, 1604 (1998); Ralph & Lund, AIP Conf. Proc. 1110, 155 (2009):
  // input |psi> -> 2 T_+ |psi><psi| T_+ summed over the two heralds, n >= 2 removed.
  const std::vector<double> c{0.6, 0.5, 0.4, 0.3, 0.2};
  double norm = 0.0;
  for (double x : c) norm += x * x;
  for (double g : {1.0, 2.0}) {
    const double kappa = g * g / (1.0 + g * g);
    const auto out = steps_test::apply(scissors_operation(g, 1.0, resolving(1.0, 0.0), 4), steps_test::pure(c));
    CHECK(out[0][0] == doctest::Approx((1.0 - kappa) * c[0] * c[0] / 1.0).epsilon(1e-13));
    CHECK(out[0][1] == doctest::Approx((1.0 - kappa) * g * c[0] * c[1]).epsilon(1e-13));
    CHECK(out[1][1] == doctest::Approx((1.0 - kappa) * g * g * c[1] * c[1]).epsilon(1e-13));
    for (int n = 2; n <= 4; ++n) CHECK(out[n][n] == 0.0);
    // P = (1-kappa)(|c0|^2 + g^2 |c1|^2) / |c|^2: 0.3388888889 (kappa = 0.5), 0.3022222222 (0.8)
    CHECK(steps_test::trace(out) / norm == doctest::Approx(g == 1.0 ? 0.3388888889 : 0.3022222222).epsilon(1e-9));
  }
}

TEST_CASE("scissors with real counters and a lossy photon source match a brute-force network simulation") {
  // Reference: tests/reference/steps_scissors.csv, three-mode Fock simulation with matrix-
  // exponential beam splitters (scripts/reference/steps_scissors.py, mpmath 30 digits).
  const auto table = steps_test::read_table("steps_scissors.csv");
  REQUIRE(table.rows.size() >= 8);
  for (const auto& r : table.rows) {
    CAPTURE(r.at("case"));
    const CounterModel counter{r.at("kind") == "threshold" ? CounterKind::threshold : CounterKind::resolving,
                               steps_test::num(r, "efficiency"), steps_test::num(r, "dark"), 1e-6, 0.0};
    std::vector<double> c;
    for (const char* key : {"c0", "c1", "c2", "c3", "c4"}) c.push_back(steps_test::num(r, key));
    const auto op = scissors_operation(steps_test::num(r, "gain"), steps_test::num(r, "source_efficiency"), counter,
                                       4, Weighting::full, r.at("corrected") == "1");
    const auto out = steps_test::apply(op, steps_test::pure(c));
    CHECK(out[0][0] == doctest::Approx(steps_test::num(r, "rho00")).epsilon(1e-12));
    CHECK(out[1][1] == doctest::Approx(steps_test::num(r, "rho11")).epsilon(1e-12));
    CHECK(out[0][1] == doctest::Approx(steps_test::num(r, "rho01")).epsilon(1e-12).scale(1.0));
    CHECK(steps_test::trace(out) == doctest::Approx(steps_test::num(r, "P")).epsilon(1e-12));
  }
}

TEST_CASE("merging scissors outcomes without the pi phase removes every output coherence") {
  // pitfall of the scissors: the uncorrected mixture of T_+ and T_- is diagonal (closed form).
  const std::vector<double> c{0.6, 0.5, 0.4, 0.3, 0.2};
  const auto out = steps_test::apply(scissors_operation(1.5, 1.0, resolving(1.0, 0.0), 4, Weighting::full, false),
                                     steps_test::pure(c));
  CHECK(std::abs(out[0][1]) < 1e-16);
  CHECK(out[0][0] > 0.1);
}
