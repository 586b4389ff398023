// The exact paths of the point evaluator: Gaussian protocols on the covariance matrix, separable
// inputs and entanglement-breaking links (N = E_N = 0 exactly, P from the joint photon-number
// distribution), threshold heralding as a signed sum of Gaussian terms, each checked against the
// Fock engine at entangled points and against closed forms.
#include <atomic>
#include <cmath>
#include <doctest/doctest.h>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/point.hpp"
#include "heraldry/steps.hpp"
#include "point/exact.hpp"

using namespace heraldry;
using namespace heraldry::steps;
using namespace heraldry::point;

namespace {

StepSpec tap(Mode mode, double t, int counter, int counts = 1) {
  return make("tap", mode, {{"transmissivity", t}, {"counts", counts}}, counter);
}

CounterModel threshold(double eta, double dark) { return {CounterKind::threshold, eta, dark, 1e-6, 0.0}; }
CounterModel resolving(double eta, double dark) { return {CounterKind::resolving, eta, dark, 1e-6, 0.0}; }

// A noisy, entangled point: TMST(0.5, 0.05) with mode b through tau = 0.7, n_E = 0.2.
PointSpec noisy_point() {
  PointSpec p;
  p.source.squeezing_r = 0.5;
  p.source.thermal_photons = 0.05;
  p.channel_b = {0.7, 0.2};
  p.steps = {make("link")};
  p.counters = {threshold(0.6, 0.02), resolving(0.7, 0.03)};
  p.numerics.tolerance = 1e-14;
  return p;
}

// Beyond survival: the same source, mode b through tau = 0.3 and a bath of 40 photons
// ((1 - tau) n_E = 28 >= tau: entanglement breaking, Holevo 2008).
PointSpec separable_point() {
  PointSpec p = noisy_point();
  p.channel_b = {0.3, 40.0};
  return p;
}

gaussian::StandardForm prefix_state(const PointSpec& p) { return bare_state(p); }

// The kinds of heralded step, each on a mode, with the counters above (0 threshold, 1 resolving).
std::vector<std::pair<const char*, StepSpec>> every_step_kind() {
  return {
      {"tap, threshold", tap(Mode::B, 0.9, 0)},
      {"tap on a, threshold", tap(Mode::A, 0.85, 0)},
      {"tap, resolving, 2 counts", tap(Mode::B, 0.8, 1, 2)},
      {"add, threshold", make("add", Mode::B, {{"squeezing", 0.2}}, 0)},
      {"add, resolving", make("add", Mode::A, {{"squeezing", 0.25}}, 1)},
      {"amplify", make("amplify", Mode::B, {{"gain", 1.3}, {"max_photons", 4}})},
      {"scissors, threshold", make("scissors", Mode::B, {{"gain", 1.2}, {"photon_source_efficiency", 0.9}}, 0)},
      {"scissors, resolving", make("scissors", Mode::A, {{"gain", 0.8}, {"photon_source_efficiency", 1.0}}, 1)},
  };
}

}  // namespace

TEST_CASE("the joint photon-number distribution equals the Fock state's diagonal and the TMSV closed form") {
  // Reference: the diagonal of fock::sector_state (the closed-form Fock elements of a Gaussian
  // state), and for a TMSV p(n, m) = delta_nm (1 - lambda^2) lambda^{2n}, lambda = tanh r
  // (textbook: Barnett & Radmore, Methods in Theoretical Quantum Optics, 1997).
  const int n = 20;
  const gaussian::StandardForm tmsv = gaussian::tmst(0.6, 0.0);
  const std::vector<double> p = point::detail::photon_numbers(tmsv, n, n);
  const double l2 = std::pow(std::tanh(0.6), 2);
  for (int i = 0; i <= n; ++i)
    for (int j = 0; j <= n; ++j)
      CHECK(p[i * (n + 1) + j] == doctest::Approx(i == j ? (1 - l2) * std::pow(l2, i) : 0.0).epsilon(1e-12));
  for (const auto& form : {gaussian::apply(gaussian::tmst(0.5, 0.1), Mode::B, {0.6, 0.4}),
                           gaussian::apply(gaussian::tmst(0.5, 0.05), Mode::B, {0.3, 40.0})}) {
    const fock::SectorState s = fock::sector_state(form, n);
    const std::vector<double> q = point::detail::photon_numbers(form, n, n);
    for (int i = 0; i <= n; ++i)
      for (int j = 0; j <= n; ++j) CHECK(q[i * (n + 1) + j] == doctest::Approx(s.get(i, j, i, j)).epsilon(1e-11));
  }
}

TEST_CASE("photon-number path: P and the false-herald fraction equal the Fock engine's at entangled points") {
  // Both are exact statements of P = Tr[E rho] (the Fock engine's ledger bounds its error, here
  // below 1e-14 relative); every step kind's effect is diagonal in photon number.
  for (const auto& [name, step] : every_step_kind()) {
    CAPTURE(name);
    PointSpec p = noisy_point();
    p.steps.push_back(step);
    const PointResult fock = evaluate(p);
    REQUIRE(fock.status == Status::ok);
    REQUIRE(fock.method == Method::fock);
    const auto num = point::detail::photon_number(p, prefix_state(p), 1);
    REQUIRE(num.has_value());
    CHECK(num->probability == doctest::Approx(fock.success_probability).epsilon(1e-10));
    CHECK(1.0 - num->genuine_probability / num->probability ==
          doctest::Approx(fock.false_herald_fraction).epsilon(1e-9));
  }
  // Both modes heralded: the double sum.
  PointSpec p = noisy_point();
  p.steps.push_back(tap(Mode::A, 0.9, 1, 1));
  p.steps.push_back(make("scissors", Mode::B, {{"gain", 1.1}, {"photon_source_efficiency", 0.95}}, 0));
  const PointResult fock = evaluate(p);
  REQUIRE(fock.status == Status::ok);
  const auto num = point::detail::photon_number(p, prefix_state(p), 1);
  REQUIRE(num.has_value());
  CHECK(num->probability == doctest::Approx(fock.success_probability).epsilon(1e-10));
}

TEST_CASE("Gaussian-sum path: P, F and the false-herald fraction equal the Fock engine's at entangled points") {
  // Threshold taps and additions: click = everything minus the no-click part, a Gaussian filter.
  const std::vector<std::vector<StepSpec>> cases = {
      {tap(Mode::B, 0.9, 0)},
      {tap(Mode::A, 0.95, 0), tap(Mode::B, 0.9, 0)},
      {make("add", Mode::B, {{"squeezing", 0.2}}, 0)},
      {make("add", Mode::A, {{"squeezing", 0.15}}, 0), tap(Mode::B, 0.92, 0)},
      {tap(Mode::B, 0.9, 0), tap(Mode::B, 0.8, 0)},  // two taps on one mode
  };
  for (std::size_t c = 0; c < cases.size(); ++c) {
    CAPTURE(c);
    PointSpec p = noisy_point();
    p.numerics.tolerance = 1e-16;  // F from the Fock state carries ~2 sqrt(tolerance)
    for (const auto& s : cases[c]) p.steps.push_back(s);
    const PointResult fock = evaluate(p);
    REQUIRE(fock.status == Status::ok);
    const auto sum = point::detail::gaussian_sum(p, prefix_state(p), 1);
    REQUIRE(sum.has_value());
    CHECK(sum->probability == doctest::Approx(fock.success_probability).epsilon(1e-9));
    CHECK(sum->fidelity == doctest::Approx(fock.fidelity).epsilon(1e-9));
    CHECK(1.0 - sum->genuine_probability / sum->probability == doctest::Approx(fock.false_herald_fraction).epsilon(1e-9));
  }
}

TEST_CASE("closed form: a threshold tap on a thermal marginal, with the false-herald fraction") {
  // Mode b of the bare link is thermal with mean m = (b - 1)/2; each photon reaches the counter
  // with probability 1 - T and is detected with eta, so P(no click) = (1-d) E[(1-q)^n] =
  // (1-d)/(1 + q m), q = (1-T) eta (the generating function of the geometric law). A false herald
  // is a click whose counter received no photon: d E[T^n] = d / (1 + (1-T) m) (derived here).
  PointSpec p = separable_point();
  p.steps.push_back(tap(Mode::B, 0.9, 0));
  const double m = 0.5 * (bare_state(p).b - 1.0), d = 0.02, eta = 0.6, t = 0.9;
  const double expect_p = 1.0 - (1.0 - d) / (1.0 + (1.0 - t) * eta * m);
  const double expect_false = d / (1.0 + (1.0 - t) * m) / expect_p;
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::separable_input);
  CHECK(r.method == Method::gaussian_sum);
  CHECK(r.success_probability == doctest::Approx(expect_p).epsilon(1e-12));
  CHECK(r.false_herald_fraction == doctest::Approx(expect_false).epsilon(1e-11));
  const auto num = point::detail::photon_number(p, bare_state(p), 1);
  REQUIRE(num.has_value());
  CHECK(num->probability == doctest::Approx(expect_p).epsilon(1e-12));
  CHECK(1.0 - num->genuine_probability / num->probability == doctest::Approx(expect_false).epsilon(1e-10));
}

TEST_CASE("separable inputs give E_N = 0 with the separable status for every step kind") {
  // Local operations with postselection cannot create entanglement; the PPT test on the CM is
  // necessary and sufficient for two modes (Simon, PRL 84, 2726 (2000)); F <= 1/2 for a
  // separable resource (Braunstein, Fuchs & Kimble, J. Mod. Opt. 47, 267 (2000)).
  for (const auto& [name, step] : every_step_kind()) {
    CAPTURE(name);
    PointSpec p = separable_point();
    p.steps.push_back(step);
    REQUIRE(point::detail::separable(bare_state(p)));
    const PointResult r = evaluate(p);
    CHECK(r.status == Status::separable_input);
    CHECK(r.negativity == 0.0);
    CHECK(r.log_negativity == 0.0);
    CHECK(r.success_probability > 0.0);
    CHECK(r.success_probability <= 1.0);
    CHECK(r.fidelity <= 0.5);
    CHECK((r.method == Method::gaussian_sum || r.method == Method::photon_number));
    if (r.method == Method::photon_number) CHECK(r.fidelity_bound == 1);
    if (r.method == Method::gaussian_sum) CHECK(r.fidelity_bound == 0);
  }
}

TEST_CASE("an entanglement-breaking link after the heralded steps: separable output, P of the source heralds") {
  // A tap at the source, then a link with (1 - tau) n_E >= tau on mode b (Holevo 2008): the
  // output is separable whatever entered; the link is trace preserving, so P is the tap's P on
  // the source state (computed by the Fock engine without the link, small photon numbers).
  PointSpec before = noisy_point();
  before.steps = {tap(Mode::A, 0.9, 0)};
  before.numerics.tolerance = 1e-16;
  const PointResult source_only = evaluate(before);
  REQUIRE(source_only.status == Status::ok);
  PointSpec p = before;
  p.channel_b = {0.2, 50.0};
  p.steps = {tap(Mode::A, 0.9, 0), make("link")};
  REQUIRE(point::detail::entanglement_breaking(p.channel_b));
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::separable_input);
  CHECK(r.method == Method::gaussian_sum);
  CHECK(r.log_negativity == 0.0);
  CHECK(r.success_probability == doctest::Approx(source_only.success_probability).epsilon(1e-10));
  CHECK(r.false_herald_fraction == doctest::Approx(source_only.false_herald_fraction).epsilon(1e-9));
  CHECK(r.fidelity <= 0.5);
}

TEST_CASE("protocols of Gaussian steps only take the covariance-matrix figures") {
  // Vidal & Werner, PRA 65, 032314 (2002) for E_N; F = 2 / (2 + a + b - 2c) for unit-gain
  // Braunstein-Kimble teleportation with a standard-form resource.
  PointSpec p = noisy_point();
  p.steps.push_back(make("loss", Mode::A, {{"transmissivity", 0.9}}));
  const PointResult r = evaluate(p);
  const gaussian::StandardForm s = gaussian::apply(bare_state(p), Mode::A, {0.9, 0.0});
  CHECK(r.method == Method::covariance);
  CHECK(r.status == Status::ok);
  CHECK(r.success_probability == 1.0);
  CHECK(r.log_negativity == doctest::Approx(gaussian::log_negativity(s)).epsilon(1e-14));
  CHECK(r.fidelity == doctest::Approx(2.0 / (2.0 + s.a + s.b - 2.0 * s.c)).epsilon(1e-14));
}

TEST_CASE("a point far beyond survival with a bath of 1250 photons is exact and fast, never truncated") {
  // The room-temperature bath at 5 GHz holds ~1250 photons per mode (Planck); a Fock state of
  // that link would need a cutoff in the tens of thousands.
  PointSpec p = noisy_point();
  p.channel_b = {0.2, 1250.0};
  p.steps.push_back(tap(Mode::B, 0.95, 0));
  p.steps.push_back(make("scissors", Mode::A, {{"gain", 1.0}, {"photon_source_efficiency", 1.0}}, 1));
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::separable_input);
  CHECK(r.method == Method::photon_number);
  CHECK(r.truncation_error < 1e-15);
  // With the tap alone, the Gaussian sum and the photon-number sum agree (1e-12).
  PointSpec q = noisy_point();
  q.channel_b = {0.2, 1250.0};
  q.steps.push_back(tap(Mode::B, 0.95, 0));
  const auto sum = point::detail::gaussian_sum(q, bare_state(q), 1);
  const auto num = point::detail::photon_number(q, bare_state(q), 1);
  REQUIRE(sum.has_value());
  REQUIRE(num.has_value());
  CHECK(sum->probability == doctest::Approx(num->probability).epsilon(1e-12));
}

TEST_CASE("at separable points the photon-number double sum equals the Gaussian sum (two independent exact paths)") {
  // Both modes heralded beyond survival: the joint law's recurrence subtracts there (a3 >= 0);
  // the Gaussian-sum path shares none of its arithmetic.
  for (const link::Channel ch : {link::Channel{0.5, 2.0}, link::Channel{0.3, 40.0}, link::Channel{0.05, 600.0}}) {
    CAPTURE(ch.bath_photons);
    PointSpec p = noisy_point();
    p.source.squeezing_r = 0.9;
    p.channel_a = {0.6, 3.0};
    p.channel_b = ch;
    p.steps.push_back(tap(Mode::A, 0.9, 0));
    p.steps.push_back(tap(Mode::B, 0.8, 0));
    REQUIRE(point::detail::separable(bare_state(p)));
    const auto sum = point::detail::gaussian_sum(p, bare_state(p), 1);
    const auto num = point::detail::photon_number(p, bare_state(p), 1);
    REQUIRE(sum.has_value());
    REQUIRE(num.has_value());
    CHECK(num->probability == doctest::Approx(sum->probability).epsilon(1e-10));
    CHECK(num->genuine_probability == doctest::Approx(sum->genuine_probability).epsilon(1e-10));
  }
}

TEST_CASE("a separable point small enough for the Fock engine gets a computed fidelity, not the bound") {
  // Mode b through tau = 0.5 with n_E = 2 ((1 - tau) n_E = 1 >= tau: entanglement breaking,
  // Holevo 2008) holds ~1.4 photons: the photon-number path gives P, the Fock engine F, which a
  // separable resource keeps <= 1/2 (Braunstein, Fuchs & Kimble 2000).
  PointSpec p = noisy_point();
  p.channel_b = {0.5, 2.0};
  p.steps.push_back(make("scissors", Mode::B, {{"gain", 1.2}, {"photon_source_efficiency", 0.9}}, 1));
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::separable_input);
  CHECK(r.method == Method::photon_number);
  CHECK(r.fidelity_bound == 0);
  CHECK(r.fidelity > 0.0);
  CHECK(r.fidelity <= 0.5);
  CHECK(r.log_negativity == 0.0);
}

TEST_CASE("a set cancel flag stops an evaluation with point::Cancelled") {
  std::atomic<bool> stop{true};
  PointSpec p = noisy_point();
  p.steps.push_back(tap(Mode::B, 0.9, 0));
  p.numerics.cancel = &stop;
  CHECK_THROWS_AS(evaluate(p), Cancelled);
  stop = false;
  CHECK(evaluate(p).status == Status::ok);
}
