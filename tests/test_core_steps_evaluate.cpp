// The point evaluator: reference tables, closed forms, limits, the automatic cutoff and the
// statuses of numerical outcomes.
#include <cmath>
#include <doctest/doctest.h>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/point.hpp"
#include "heraldry/steps.hpp"
#include "test_core_steps_support.hpp"

using namespace heraldry;
using namespace heraldry::steps;
using namespace heraldry::point;

namespace {

StepSpec link_step() { return make("link"); }

StepSpec tap(Mode mode, double t, int counter, int counts = 1) {
  return make("tap", mode, {{"transmissivity", t}, {"counts", counts}}, counter);
}

PointSpec tmsv_point(double r) {
  PointSpec p;
  p.source.squeezing_r = r;
  p.steps = {link_step()};
  p.numerics.tolerance = 1e-20;  // E_N and F carry ~2 sqrt(tolerance) of truncation error
  return p;
}

bool all_finite(const PointResult& r) {
  for (double x : {r.success_probability, r.negativity, r.log_negativity, r.fidelity, r.false_herald_fraction,
                   r.truncation_error, r.amplifier_cut_fraction})
    if (!std::isfinite(x)) return false;
  return true;
}

}  // namespace

TEST_CASE("photon subtraction with real counters matches the generating-function reference table") {
  // tests/reference/steps_subtraction.csv (scripts/reference/steps_subtraction.py): P from the
  // closed forms of the generating function G(y,z) with the on/off counter model of Kitagawa,
  // Takeoka, Sasaki & Chefles, PRA 73, 042310 (2006) (mpmath, 30 digits, confirmed by a direct
  // photon-number sum); E_N, N, F from a dense partial transpose and a matrix-exponential EPR
  // operator (numpy). Budget: 1e-9 relative in P, 1e-6 in E_N, N and F.
  const auto table = steps_test::read_table("steps_subtraction.csv");
  REQUIRE(table.rows.size() >= 11);
  double worst_p = 0.0, worst_measure = 0.0;
  for (const auto& row : table.rows) {
    CAPTURE(row.at("case"));
    PointSpec p;
    p.source.squeezing_r = steps_test::num(row, "r");
    p.source.thermal_photons = steps_test::num(row, "thermal_photons");
    p.channel_b = {steps_test::num(row, "loss_tau_b"), steps_test::num(row, "loss_bath_b")};
    p.counters = {{row.at("kind") == "threshold" ? CounterKind::threshold : CounterKind::resolving,
                   steps_test::num(row, "eta"), steps_test::num(row, "dark"), 1e-6, 0.0}};
    p.steps = {link_step(), tap(Mode::A, steps_test::num(row, "T"), 0)};
    if (row.at("sides") == "two") p.steps.push_back(tap(Mode::B, steps_test::num(row, "T"), 0));
    p.numerics.tolerance = 1e-16;  // E_N and F then carry ~2 sqrt(1e-16) = 2e-8 of truncation error
    const PointResult r = evaluate(p);
    REQUIRE(r.status == Status::ok);
    CHECK(r.truncation_error <= 1e-16);
    const double p_ref = steps_test::num(row, "P_closed");
    CHECK(r.success_probability == doctest::Approx(p_ref).epsilon(1e-9));
    CHECK(std::abs(r.log_negativity - steps_test::num(row, "log_negativity")) < 1e-6);
    CHECK(std::abs(r.negativity - steps_test::num(row, "negativity")) < 1e-6);
    CHECK(std::abs(r.fidelity - steps_test::num(row, "fidelity")) < 1e-6);
    worst_p = std::max(worst_p, std::abs(r.success_probability / p_ref - 1.0));
    worst_measure = std::max({worst_measure, std::abs(r.log_negativity - steps_test::num(row, "log_negativity")),
                              std::abs(r.fidelity - steps_test::num(row, "fidelity"))});
  }
  MESSAGE("subtraction vs reference: max relative deviation in P " << worst_p << ", in E_N/F " << worst_measure);
}

TEST_CASE("one-sided subtraction lowers the teleportation fidelity below the TMSV's while two-sided raises it") {
  // TMSV fidelity (1 + lambda)/2 = 1/(1 + e^{-2r}) = 0.7310585786 for r = 0.5 (closed form); the
  // reference table gives 0.513 one-sided and 0.794 two-sided for T = 0.9 ideal threshold counters
  // (effect reported by Opatrny, Kurizki & Welsch, PRA 61, 032302 (2000) for two-sided subtraction).
  const double tmsv = 1.0 / (1.0 + std::exp(-1.0));
  PointSpec p = tmsv_point(0.5);
  p.counters = {{CounterKind::threshold, 1.0, 0.0, 1e-6, 0.0}};
  const PointResult bare = evaluate(p);
  CHECK(bare.fidelity == doctest::Approx(tmsv).epsilon(1e-10));
  p.steps.push_back(tap(Mode::A, 0.9, 0));
  const PointResult one = evaluate(p);
  p.steps.push_back(tap(Mode::B, 0.9, 0));
  const PointResult two = evaluate(p);
  CHECK(one.fidelity < tmsv);
  CHECK(two.fidelity > tmsv);
  CHECK(one.log_negativity > bare.log_negativity);
}

TEST_CASE("without distillation steps the Fock evaluation reproduces the Gaussian figures") {
  // TMST r = 0.5, n_th = 0.02, thermal loss (0.9, 0.1) on B: E_N = 1.2348131414 and
  // F = 2/(2 + a + b - 2c) = 0.7017178606 (closed forms on the covariance matrix, Vidal & Werner,
  // PRA 65, 032314 (2002); Braunstein & Kimble, PRL 80, 869 (1998)).
  PointSpec p = tmsv_point(0.5);
  p.source.thermal_photons = 0.02;
  p.channel_b = {0.9, 0.1};
  p.numerics.tolerance = 1e-20;  // state error ~ 2 sqrt(tolerance) = 2e-10
  const auto form = gaussian::apply(gaussian::tmst(0.5, 0.02), Mode::B, {0.9, 0.1});
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  CHECK(r.success_probability == doctest::Approx(1.0).epsilon(1e-11));
  CHECK(r.log_negativity == doctest::Approx(gaussian::log_negativity(form)).epsilon(1e-9));
  CHECK(r.negativity == doctest::Approx(gaussian::negativity(form)).epsilon(1e-9));
  CHECK(r.fidelity == doctest::Approx(gaussian::fidelity(form)).epsilon(1e-9));
  CHECK(r.log_negativity == doctest::Approx(1.2348131414).epsilon(1e-9));
  CHECK(r.fidelity == doctest::Approx(0.7017178606).epsilon(1e-9));
  CHECK(r.false_herald_fraction == 0.0);
}

TEST_CASE("dark counts set a floor: at T = 1 the herald probability is p one-sided and p^2 two-sided") {
  // Pitfall of real counters: with no photon reaching the counter only dark counts fire it
  // (closed form: P = p, p^2), every herald is false, and the state is the input's.
  const double dark = 1e-3;
  PointSpec p = tmsv_point(0.5);
  p.counters = {{CounterKind::threshold, 0.8, dark, 1e-6, 0.0}};
  const double en_input = std::log2(std::exp(1.0));  // 2r / ln 2 (closed form)
  p.steps.push_back(tap(Mode::A, 1.0, 0));
  const PointResult one = evaluate(p);
  REQUIRE(one.status == Status::ok);
  CHECK(one.success_probability == doctest::Approx(dark).epsilon(1e-10));
  CHECK(one.false_herald_fraction == doctest::Approx(1.0).epsilon(1e-12));
  CHECK(one.log_negativity == doctest::Approx(en_input).epsilon(1e-9));
  p.steps.push_back(tap(Mode::B, 1.0, 0));
  const PointResult two = evaluate(p);
  REQUIRE(two.status == Status::ok);
  CHECK(two.success_probability == doctest::Approx(dark * dark).epsilon(1e-10));
  // Just below T = 1 the floor dominates: P -> p (1 + O(1-T)).
  p.steps = {link_step(), tap(Mode::A, 0.99999, 0)};
  const PointResult near = evaluate(p);
  CHECK(near.success_probability > dark);
  CHECK(near.success_probability < dark + 1e-4);
  CHECK(near.false_herald_fraction > 0.1);
}

TEST_CASE("counters with zero efficiency herald only dark counts: false when a counter received no photon") {
  // The heralds ignore the photons, so the false fraction is the probability that a tap sent no
  // photon to its counter: with n photons in each mode of a TMSV (p_n = (1 - l^2) l^{2n}),
  // P(k_a = 0 or k_b = 0) = 2 E[T^n] - E[T^{2n}], E[x^n] = (1 - l^2) / (1 - l^2 x) (derived
  // closed form).
  PointSpec p = tmsv_point(0.4);
  p.counters = {{CounterKind::threshold, 0.0, 2e-3, 1e-6, 0.0}, {CounterKind::resolving, 0.0, 0.01, 1e-6, 0.0}};
  p.steps = {link_step(), tap(Mode::A, 0.9, 0), tap(Mode::B, 0.9, 1)};
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  const double l2 = std::pow(std::tanh(0.4), 2);
  auto moment = [&](double x) { return (1.0 - l2) / (1.0 - l2 * x); };
  CHECK(r.false_herald_fraction == doctest::Approx(2.0 * moment(0.9) - moment(0.81)).epsilon(1e-9));
  // P = p * nu e^{-nu} (closed form: the counters ignore the photons)
  CHECK(r.success_probability == doctest::Approx(2e-3 * 0.01 * std::exp(-0.01)).epsilon(1e-10));
}

TEST_CASE("ideal counters at T = 1 never herald: the status says so and no figure is NaN") {
  PointSpec p = tmsv_point(0.5);
  p.counters = {{CounterKind::threshold, 1.0, 0.0, 1e-6, 0.0}};
  p.steps.push_back(tap(Mode::A, 1.0, 0));
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::herald_below_roundoff);
  CHECK(r.success_probability == 0.0);
  CHECK(all_finite(r));
}

TEST_CASE("the physical noiseless amplifier through the evaluator: P, E_N and the cut weight") {
  // g = 1.5, N = 6 on mode B of TMSV r = 0.5: P = (1-l^2) g^{-2N}[1-(g l)^{2N+2}]/(1-g^2 l^2) =
  // 0.0115986493, E_N = 2.241934, cut weight l^{2(N+1)} (closed forms).
  PointSpec p = tmsv_point(0.5);
  p.steps.push_back(make("amplify", Mode::B, {{"gain", 1.5}, {"max_photons", 6}}));
  const PointResult r = evaluate(p);
  REQUIRE(r.status == Status::ok);
  CHECK(r.success_probability == doctest::Approx(0.0115986493).epsilon(1e-8));
  CHECK(r.log_negativity == doctest::Approx(2.241934).epsilon(1e-6));
  CHECK(r.amplifier_cut_fraction == doctest::Approx(std::pow(std::tanh(0.5), 14)).epsilon(1e-9));
  // Ideal form: TMSV(g l), E_N = log2[(1 + x)/(1 - x)], x = g l (Ralph & Lund 2009).
  p.steps.back().set("max_photons", 0);
  const PointResult ideal = evaluate(p);
  REQUIRE(ideal.status == Status::ok);
  const double x = 1.5 * std::tanh(0.5);
  CHECK(ideal.log_negativity == doctest::Approx(std::log2((1 + x) / (1 - x))).epsilon(1e-9));
  CHECK(ideal.fidelity == doctest::Approx((1 + x) / 2).epsilon(1e-9));
}

TEST_CASE("the automatic cutoff raises the Gaussian estimate until the heralded state meets the tolerance") {
  PointSpec p = tmsv_point(0.7);
  p.source.thermal_photons = 0.02;
  p.channel_b = {0.8, 0.3};
  p.counters = {{CounterKind::threshold, 0.6, 1e-4, 1e-6, 0.0}};
  p.steps = {link_step(), tap(Mode::A, 0.95, 0), tap(Mode::B, 0.95, 0)};
  for (double tol : {1e-6, 1e-10}) {
    p.numerics.tolerance = tol;
    const PointResult r = evaluate(p);
    REQUIRE(r.status == Status::ok);
    CHECK(r.truncation_error <= tol);
    CHECK(r.truncation_error > 0.0);
    CHECK(r.cutoff == r.cutoff_needed);
    const auto form = gaussian::apply(gaussian::tmst(0.7, 0.02), Mode::B, {0.8, 0.3});
    CHECK(r.cutoff > fock::auto_cutoff_gaussian(form, tol, fock::Engine::sector, 1e12));
    CHECK(all_finite(r));
  }
}

TEST_CASE("a memory bound too small for the tolerance gives truncation_budget_missed with the cutoff needed") {
  PointSpec p = tmsv_point(0.7);
  p.counters = {{CounterKind::threshold, 0.6, 1e-4, 1e-6, 0.0}};
  p.steps = {link_step(), tap(Mode::A, 0.95, 0), tap(Mode::B, 0.95, 0)};
  p.numerics.tolerance = 1e-10;
  const PointResult full = evaluate(p);
  REQUIRE(full.status == Status::ok);
  p.numerics.max_memory_bytes = fock::memory_bytes_for(fock::Engine::sector, 12);
  const PointResult r = evaluate(p);
  CHECK(r.status == Status::truncation_budget_missed);
  CHECK(r.cutoff == 12);
  CHECK(r.cutoff_needed > 12);
  CHECK(r.truncation_error > p.numerics.tolerance);
  CHECK(all_finite(r));
  MESSAGE("memory-bound point: cutoff " << r.cutoff << ", needed " << r.cutoff_needed << " (unbounded run: "
                                        << full.cutoff << ")");
  // A fixed cutoff that misses the tolerance reports an estimate of the cutoff it needs.
  p.numerics.max_memory_bytes = 1e12;
  p.numerics.cutoff = 14;
  const PointResult fixed = evaluate(p);
  CHECK(fixed.status == Status::truncation_budget_missed);
  CHECK(fixed.cutoff == 14);
  CHECK(fixed.cutoff_needed > 14);
  p.numerics.cutoff = fixed.cutoff_needed + 2;
  CHECK(evaluate(p).truncation_error <= 10 * p.numerics.tolerance);
}

TEST_CASE("inconsistent points are input errors") {
  PointSpec p = tmsv_point(0.5);
  p.steps.push_back(tap(Mode::A, 0.9, 3));  // no such counter
  CHECK_THROWS_AS(evaluate(p), InputError);
  p = tmsv_point(0.5);
  p.counters = {{CounterKind::threshold, 0.5, 0.0, 1e-6, 0.0}};
  p.steps.push_back(tap(Mode::A, 0.9, 0));  // a heralded step: a Fock state is built
  p.numerics.cutoff = 200;
  p.numerics.max_memory_bytes = 1e6;  // a fixed cutoff that cannot fit
  CHECK_THROWS_AS(evaluate(p), InputError);
  p = tmsv_point(-0.1);
  CHECK_THROWS_AS(evaluate(p), InputError);
  p = tmsv_point(0.5);
  p.counters = {{CounterKind::threshold, 0.5, 0.0, 1e-6, 0.0}};
  p.steps.push_back(tap(Mode::A, 0.9, 0, 2));  // a threshold counter cannot report 2
  CHECK_THROWS_AS(evaluate(p), InputError);
}

TEST_CASE("the sector and dense evaluators agree on a protocol using every step") {
  // engine-vs-engine at a fixed cutoff of 10, steps before and after the link.
  PointSpec p;
  p.source.squeezing_r = 0.6;
  p.source.thermal_photons = 0.01;
  p.channel_a = {0.98, 0.05};
  p.channel_b = {0.9, 2.0};
  p.counters = {{CounterKind::threshold, 0.7, 1e-3, 1e-6, 2e-6}, {CounterKind::resolving, 0.9, 0.01, 1e-6, 0.0}};
  const StepSpec add = make("add", Mode::A, {{"squeezing", 0.15}}, 1);
  const StepSpec amp = make("amplify", Mode::B, {{"gain", 1.2}, {"max_photons", 5}});
  const StepSpec sc = make("scissors", Mode::A, {{"gain", 1.3}, {"photon_source_efficiency", 0.95}}, 0);
  // a loss at the temperature whose Planck occupation at the carrier is 0.1 photons
  const StepSpec loss = make("loss", Mode::B,
                             {{"transmissivity", 0.95}, {"temperature_k", steps_test::temperature_for_occupation(0.1, p.source.frequency_hz)}});
  p.steps = {tap(Mode::A, 0.9, 0), link_step(), add, tap(Mode::B, 0.92, 1), amp, loss, sc};
  p.numerics.cutoff = 10;
  p.numerics.tolerance = 0.5;
  const PointResult s = evaluate(p);
  p.numerics.engine = fock::Engine::dense;
  const PointResult d = evaluate(p);
  CHECK(s.status == d.status);
  CHECK(s.success_probability == doctest::Approx(d.success_probability).epsilon(1e-12));
  CHECK(s.log_negativity == doctest::Approx(d.log_negativity).epsilon(1e-10));
  CHECK(s.fidelity == doctest::Approx(d.fidelity).epsilon(1e-12));
  CHECK(s.false_herald_fraction == doctest::Approx(d.false_herald_fraction).epsilon(1e-10));
  CHECK(s.truncation_error == doctest::Approx(d.truncation_error).epsilon(1e-10));
  CHECK(s.amplifier_cut_fraction == doctest::Approx(d.amplifier_cut_fraction).epsilon(1e-10));
  CHECK(s.false_herald_fraction > 0.0);
  CHECK(s.false_herald_fraction < 1.0);
  CHECK(all_finite(s));
}
