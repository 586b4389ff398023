// Extreme but legal inputs to the point evaluator: each gives correct figures (checked against a
// closed form or the Gaussian layer, a different algorithm) or a status naming the limit, and
// never a NaN or a figure outside its range.
#include <cmath>
#include <doctest/doctest.h>

#include "heraldry/gaussian.hpp"
#include "heraldry/point.hpp"
#include "heraldry/steps.hpp"

using namespace heraldry;
using namespace heraldry::steps;
using namespace heraldry::point;

namespace {

StepSpec tap_b(double t, int counter = 0, int counts = 1) {
  return make("tap", Mode::B, {{"transmissivity", t}, {"counts", counts}}, counter);
}

PointSpec link_point_spec(double r, link::Channel a, link::Channel b) {
  PointSpec p;
  p.source.squeezing_r = r;
  p.channel_a = a;
  p.channel_b = b;
  p.steps = {make("link")};
  p.numerics.tolerance = 1e-12;
  return p;
}

CounterModel counter(CounterKind kind, double efficiency, double dark) { return {kind, efficiency, dark, 1e-6, 0.0}; }

// PointResult's contract: P, F, false-herald fraction in [0, 1]; N, E_N >= 0; nothing NaN.
void check_ranges(const PointResult& r) {
  for (double x : {r.success_probability, r.negativity, r.log_negativity, r.fidelity, r.false_herald_fraction,
                   r.truncation_error, r.amplifier_cut_fraction})
    CHECK(std::isfinite(x));
  CHECK(r.success_probability >= 0.0);
  CHECK(r.success_probability <= 1.0);
  CHECK(r.negativity >= 0.0);
  CHECK(r.log_negativity >= 0.0);
  CHECK(r.fidelity >= 0.0);
  CHECK(r.fidelity <= 1.0);
  CHECK(r.false_herald_fraction >= 0.0);
  CHECK(r.false_herald_fraction <= 1.0);
}

double gaussian_log_negativity(double r, link::Channel a, link::Channel b) {
  return gaussian::log_negativity(gaussian::apply(gaussian::apply(gaussian::tmst(r, 0.0), Mode::A, a), Mode::B, b));
}
double gaussian_fidelity(double r, link::Channel a, link::Channel b) {
  return gaussian::fidelity(gaussian::apply(gaussian::apply(gaussian::tmst(r, 0.0), Mode::A, a), Mode::B, b));
}

const double r_20db = squeezing_parameter_from_db(20.0);  // ln 10

}  // namespace

TEST_CASE("20 dB of squeezing beyond the cutoff allowed is a missed budget that names the cutoff it needs") {
  // Closed form: a TMSV truncated at N per mode loses lambda^{2(N+1)}, lambda = tanh r; the
  // figures' error sqrt(lost) <= 1e-10 needs N + 1 >= ln 1e-10 / ln lambda = 1151.2 for r = ln 10.
  // The link alone is Gaussian (exact on the covariance matrix, no cutoff); a heralded step on
  // it needs a Fock state of at least that cutoff (subtraction only fattens the tail).
  PointSpec p = link_point_spec(r_20db, {}, {});
  p.numerics.tolerance = 1e-10;
  p.numerics.max_cutoff = 60;
  const PointResult bare = evaluate(p);
  CHECK(bare.status == Status::ok);
  CHECK(bare.method == Method::covariance);
  CHECK(bare.log_negativity == doctest::Approx(2.0 * r_20db / std::log(2.0)).epsilon(1e-12));  // E_N = 2r / ln 2
  p.counters = {counter(CounterKind::threshold, 0.5, 0.0)};
  p.steps.push_back(tap_b(0.99));
  p.numerics.max_cutoff = 120;  // keeps lambda^{2 N} ~ 0.7 % of the state: figures, flagged
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::truncation_budget_missed);
  CHECK(r.method == Method::fock);
  CHECK(r.cutoff == 120);
  const double needed = std::log(1e-10) / std::log(std::tanh(r_20db)) - 1.0;
  MESSAGE("20 dB: cutoff needed " << r.cutoff_needed << ", closed form for the bare TMSV " << needed);
  CHECK(r.cutoff_needed >= 0.95 * needed);
  // The figures at the cutoff reached are kept (flagged by the status), finite and in range.
  CHECK(r.success_probability > 0.0);
  CHECK(r.log_negativity > 0.0);
  check_ranges(r);
}

TEST_CASE("20 dB of squeezing through 10 dB of pure loss on each mode matches the Gaussian layer") {
  // Different algorithm: the Gaussian layer (smallest partial-transpose symplectic eigenvalue,
  // Braunstein-Kimble fidelity of the covariance matrix).
  const link::Channel loss{0.1, 0.0};
  PointSpec p = link_point_spec(r_20db, loss, loss);
  p.numerics.tolerance = 1e-8;
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  MESSAGE("20 dB, 10 dB loss: cutoff " << r.cutoff << ", E_N " << r.log_negativity << " vs "
                                       << gaussian_log_negativity(r_20db, loss, loss));
  CHECK(std::abs(r.log_negativity - gaussian_log_negativity(r_20db, loss, loss)) < 1e-6);
  CHECK(std::abs(r.fidelity - gaussian_fidelity(r_20db, loss, loss)) < 1e-6);
  CHECK(r.success_probability == doctest::Approx(1.0).epsilon(1e-12));
  check_ranges(r);
}

TEST_CASE("a 1e5-photon bath coupled in by 1e-9 adds 1e-4 photons and the figures follow the Gaussian layer") {
  // Added noise (1 - tau) n_E = 1e-4 photons: below the entanglement-breaking threshold
  // tau / (1 - tau) (closed form), so E_N > 0; the values come from the Gaussian layer.
  const link::Channel hot{1.0 - 1e-9, 1e5};
  const PointResult r = evaluate(link_point_spec(0.5, {}, hot));
  REQUIRE(r.status == Status::ok);
  CHECK(std::abs(r.log_negativity - gaussian_log_negativity(0.5, {}, hot)) < 1e-6);
  CHECK(std::abs(r.fidelity - gaussian_fidelity(0.5, {}, hot)) < 1e-6);
  CHECK(r.log_negativity > 0.0);
  check_ranges(r);
}

TEST_CASE("a 1e5-photon bath at transmissivity 0.5: exact separable figures, no cutoff") {
  // Mode b holds (1 - tau) n_E = 5e4 photons; no Fock cutoff holds it, and none is needed: the
  // state is separable (closed form: n_E >= tau / (1 - tau)), so a tap on it gives E_N = 0 and
  // P(click) = 1 - (1-d)/(1 + (1-T) eta m) with m the thermal mean of mode b (geometric law).
  const link::Channel hot{0.5, 1e5};
  PointSpec p = link_point_spec(0.5, {}, hot);
  p.numerics.max_cutoff = 40;
  const PointResult bare = evaluate(p);
  CHECK(bare.status == Status::ok);
  CHECK(bare.log_negativity == 0.0);
  CHECK(gaussian_log_negativity(0.5, {}, hot) == 0.0);
  p.counters = {counter(CounterKind::threshold, 0.4, 1e-3)};
  p.steps.push_back(tap_b(0.99));
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::separable_input);
  CHECK(r.log_negativity == 0.0);
  const double m = 0.5 * (0.5 * std::cosh(1.0) + 0.5 * (2e5 + 1.0) - 1.0);
  CHECK(r.success_probability == doctest::Approx(1.0 - (1.0 - 1e-3) / (1.0 + 0.01 * 0.4 * m)).epsilon(1e-12));
  check_ranges(r);
}

TEST_CASE("transmissivity 1e-9 into a 0.01-photon bath on a one-way link leaves a separable state, E_N = 0") {
  // Closed form: a thermal-loss channel on one mode breaks entanglement iff n_E >= tau / (1 - tau)
  // (Holevo, Probl. Inf. Transm. 44, 171 (2008); from memory), here 0.01 >= 1e-9.
  const link::Channel far{1e-9, 0.01};
  const PointResult r = evaluate(link_point_spec(0.5, {}, far));
  REQUIRE(r.status == Status::ok);
  CHECK(std::abs(r.log_negativity) < 1e-12);  // 0 up to the eigen-solver's round-off
  CHECK(std::abs(r.negativity) < 1e-12);
  CHECK(std::abs(r.fidelity - gaussian_fidelity(0.5, {}, far)) < 1e-9);
  check_ranges(r);
}

TEST_CASE("transmissivity 1e-9 without a bath keeps a tiny entanglement equal to the Gaussian layer's") {
  // Closed form: pure loss never breaks the entanglement of a TMSV (n_E = 0 < tau / (1 - tau)).
  const link::Channel far{1e-9, 0.0};
  const PointResult r = evaluate(link_point_spec(0.5, {}, far));
  REQUIRE(r.status == Status::ok);
  const double g = gaussian_log_negativity(0.5, {}, far);
  MESSAGE("pure loss 1e-9: E_N " << r.log_negativity << " vs Gaussian " << g);
  CHECK(g > 0.0);
  CHECK(std::abs(r.log_negativity - g) < 1e-12);
  check_ranges(r);
}

TEST_CASE("a counter of efficiency 0 heralds only dark counts: P = p, every herald false, the tap a plain loss") {
  // Closed forms: a threshold counter with eta = 0 clicks with probability p whatever arrives
  // (on/off POVM 1 - (1 - p)(1 - eta)^k, Kitagawa et al., PRA 73, 042310 (2006)), so the state
  // after the herald is the input after the tap's loss T, compared with the Gaussian layer.
  const double r0 = 0.5, t = 0.9, dark = 1e-3;
  PointSpec p = link_point_spec(r0, {}, {});
  p.counters = {counter(CounterKind::threshold, 0.0, dark)};
  p.steps.push_back(tap_b(t));
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  CHECK(r.success_probability == doctest::Approx(dark).epsilon(1e-12));
  // False: the tap sent no photon to the counter, E[T^n] = (1 - l^2)/(1 - l^2 T) for the
  // thermal law p_n = (1 - l^2) l^{2n} of a TMSV mode (closed form).
  const double l2 = std::pow(std::tanh(r0), 2), none_sent = (1.0 - l2) / (1.0 - l2 * t);
  CHECK(r.false_herald_fraction == doctest::Approx(none_sent).epsilon(1e-9));
  CHECK(std::abs(r.log_negativity - gaussian_log_negativity(r0, {}, {t, 0.0})) < 1e-6);
  check_ranges(r);

  // Resolving counter, eta = 0, heralding on one count: P = nu e^{-nu} (Poisson), all false.
  p.counters = {counter(CounterKind::resolving, 0.0, dark)};
  const PointResult q = evaluate(p);
  REQUIRE(q.status == Status::ok);
  CHECK(q.success_probability == doctest::Approx(dark * std::exp(-dark)).epsilon(1e-12));
  CHECK(q.false_herald_fraction == doctest::Approx(none_sent).epsilon(1e-9));
  check_ranges(q);
}

TEST_CASE("a counter of efficiency 0 without dark counts never heralds: a status, not a number") {
  PointSpec p = link_point_spec(0.5, {}, {});
  p.counters = {counter(CounterKind::threshold, 0.0, 0.0)};
  p.steps.push_back(tap_b(0.9));
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::herald_below_roundoff);
  CHECK(r.success_probability == 0.0);  // closed form: no photon is ever detected
  check_ranges(r);
}

TEST_CASE("a counter of efficiency 1 without dark counts gives the closed-form herald probability") {
  // Closed form (thermal photon statistics of TMSV's mode b, p_n = (1 - l^2) l^{2n}, l = tanh r):
  // threshold click: 1 - sum p_n T^n = 1 - (1 - l^2) / (1 - l^2 T);
  // exactly one count: sum p_n n T^{n-1} (1 - T) = (1 - l^2) l^2 (1 - T) / (1 - l^2 T)^2.
  const double r0 = 0.5, t = 0.9, l2 = std::pow(std::tanh(r0), 2);
  PointSpec p = link_point_spec(r0, {}, {});
  p.counters = {counter(CounterKind::threshold, 1.0, 0.0)};
  p.steps.push_back(tap_b(t));
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  CHECK(r.success_probability == doctest::Approx(1.0 - (1.0 - l2) / (1.0 - l2 * t)).epsilon(1e-9));
  CHECK(r.false_herald_fraction == 0.0);
  check_ranges(r);

  p.counters = {counter(CounterKind::resolving, 1.0, 0.0)};
  const PointResult q = evaluate(p);
  REQUIRE(q.status == Status::ok);
  CHECK(q.success_probability ==
        doctest::Approx((1.0 - l2) * l2 * (1.0 - t) / std::pow(1.0 - l2 * t, 2)).epsilon(1e-9));
  check_ranges(q);
}

TEST_CASE("a dark-click probability of 1 makes the click certain: P = 1 and the state only loses the tap") {
  // Closed forms: with p = 1 a threshold counter clicks on every gate, so P = 1 and the herald
  // says nothing: the state is the input after the tap's loss T (Gaussian layer). The herald is
  // false when the tap sent no photon to the counter: FHF = E[T^n] = (1 - l^2) / (1 - l^2 T).
  const double r0 = 0.5, t = 0.9, eta = 0.5, l2 = std::pow(std::tanh(r0), 2);
  PointSpec p = link_point_spec(r0, {}, {});
  p.counters = {counter(CounterKind::threshold, eta, 1.0)};
  p.steps.push_back(tap_b(t));
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  CHECK(r.success_probability == doctest::Approx(1.0).epsilon(1e-12));
  CHECK(std::abs(r.log_negativity - gaussian_log_negativity(r0, {}, {t, 0.0})) < 1e-6);
  CHECK(std::abs(r.fidelity - gaussian_fidelity(r0, {}, {t, 0.0})) < 1e-6);
  CHECK(r.false_herald_fraction == doctest::Approx((1.0 - l2) / (1.0 - l2 * t)).epsilon(1e-9));
  check_ranges(r);

  // The no-click herald then never fires (closed form: (1 - p) (1 - eta)^k = 0).
  p.steps.back().set("counts", 0);
  const PointResult none = evaluate(p);
  CHECK(none.status == Status::herald_below_roundoff);
  CHECK(none.success_probability == 0.0);
  check_ranges(none);
}
