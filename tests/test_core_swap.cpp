// Unit-gain entanglement swapping in the Fock engine (heraldry/swap.hpp) against the covariance
// matrix, closed forms and the characteristic-function form of teleportation.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <tuple>
#include <vector>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/measures.hpp"
#include "heraldry/point.hpp"
#include "heraldry/relay.hpp"
#include "heraldry/swap.hpp"
#include "heraldry/steps.hpp"

using namespace heraldry;
using namespace heraldry::fock;

namespace {

// A Gaussian pair in Fock space at the cutoff whose trace deficit is below `deficit`, with the
// deficit itself as its ledger (as the point evaluator builds it).
SectorState fock_pair(const gaussian::StandardForm& form, double deficit) {
  const int n = auto_cutoff_gaussian(form, deficit, Engine::sector, 1e9);
  SectorState s = sector_state(form, n);
  s.add_truncation_loss(gaussian_trace_deficit(form, n) - s.truncation_loss());
  return s;
}

// A TMST (r, n_th) with mode b through the thermal-loss channel (tau, n_E).
gaussian::StandardForm arm(double r, double n_th, double tau, double n_e) {
  return gaussian::apply(gaussian::tmst(r, n_th), Mode::B, link::Channel{tau, n_e});
}

// The Schmidt-form pure state sum_n c_n |n, n> (normalised here).
SectorState schmidt(const std::vector<double>& c) {
  const int n = static_cast<int>(c.size()) - 1;
  SectorState s(n);
  double norm = 0.0;
  for (double x : c) norm += x * x;
  for (int i = 0; i <= n; ++i)
    for (int j = 0; j <= n; ++j) s.set(i, i, j, j, c[static_cast<std::size_t>(i)] * c[static_cast<std::size_t>(j)] / norm);
  return s;
}

// chi(sqrt u, sqrt u) of a U(1)-symmetric two-mode state: sum rho_{(m,n),(m',n')} D_{m'm} D_{n'n}
// at alpha = sqrt u (measures::displacement_elements; Cahill & Glauber 1969), dense loops.
double chi_radial(const SectorState& s, const Eigen::MatrixXd& dm) {
  const int n = s.cutoff();
  double chi = 0.0;
  for (int m = 0; m <= n; ++m)
    for (int k = 0; k <= n; ++k)
      for (int mp = 0; mp <= n; ++mp) {
        const int kp = mp - m + k;
        if (kp < 0 || kp > n) continue;
        chi += s.get(m, k, mp, kp) * dm(mp, m) * dm(kp, k);
      }
  return chi;
}

}  // namespace

TEST_CASE("swap of Gaussian pairs in Fock space equals the covariance-matrix unit-gain swap") {
  // The Gaussian reference: the teleported mode b1 gains the resource's EPR variance
  // a2 + b2 - 2 c2 and, for homodyne efficiency eta, 2 (1 - eta)/eta (Braunstein & Kimble, PRL 80,
  // 869 (1998); van Loock & Braunstein, PRA 61, 010302(R) (2000)); E_N from the partially
  // transposed symplectic eigenvalue (Vidal & Werner, PRA 65, 032314 (2002)), F = 2/(2 + a + b
  // - 2c) (Braunstein & Kimble). Several arms, identical and different, and three efficiencies.
  struct Case {
    gaussian::StandardForm p1, p2;
    double eta;
  };
  const std::vector<Case> cases = {
      {arm(0.5, 0.0, 1.0, 0.0), arm(0.5, 0.0, 1.0, 0.0), 1.0},     // two TMSVs
      {arm(0.6, 0.02, 0.9, 0.1), arm(0.6, 0.02, 0.9, 0.1), 1.0},   // identical thermal arms
      {arm(0.4, 0.0, 0.8, 0.0), arm(0.7, 0.01, 0.95, 0.05), 1.0},  // different arms
      {arm(0.5, 0.02, 0.97, 0.3), arm(0.5, 0.02, 0.97, 0.3), 0.9}, // a lossy Bell measurement
      {arm(0.55, 0.0, 0.85, 0.02), arm(0.45, 0.0, 0.9, 0.0), 0.7},
  };
  measures::Workspace mw;
  for (const auto& c : cases) {
    const auto expected = gaussian::swap_unit_gain(c.p1, c.p2, c.eta);
    const SectorState s1 = fock_pair(c.p1, 1e-15), s2 = fock_pair(c.p2, 1e-15);
    SwapOptions o;
    o.bell_efficiency = c.eta;
    o.max_dropped = 1e-16;
    const SectorState out = swap(s1, s2, o);
    CAPTURE(c.p1.a);
    CAPTURE(c.p2.a);
    CAPTURE(c.eta);
    CAPTURE(out.cutoff());
    CHECK(out.truncation_loss() < 1e-12);
    CHECK(out.trace() + out.truncation_loss() == doctest::Approx(1.0).epsilon(1e-12));
    CHECK(std::abs(measures::entanglement(out, mw).log_negativity - gaussian::log_negativity(expected)) < 1e-8);
    CHECK(std::abs(measures::fidelity(out, mw) - gaussian::fidelity(expected)) < 1e-8);
    CHECK(std::abs(measures::fidelity_radial(out, mw) - gaussian::fidelity(expected)) < 1e-8);
  }
}

TEST_CASE("swap with a highly squeezed resource leaves the other pair unchanged up to the resource's EPR noise") {
  // A perfect resource (r -> infinity) teleports b1 unchanged; the Gaussian unit-gain swap says the
  // output differs from the input by the added variance 2 e^{-2 r2} only. In Fock space: the
  // largest element difference of the normalised states falls with r2 and follows the Gaussian
  // prediction of E_N and F to the truncation error.
  const auto p1 = arm(0.3, 0.0, 0.9, 0.0);
  const SectorState s1 = fock_pair(p1, 1e-14);
  measures::Workspace mw;
  double previous = INFINITY;
  for (double r2 : {0.5, 1.0, 1.5}) {
    const auto p2 = gaussian::tmst(r2, 0.0);
    const SectorState s2 = fock_pair(p2, 1e-10);
    SwapOptions o;
    o.max_dropped = 1e-14;
    const SectorState out = swap(s1, s2, o);
    double diff = 0.0;
    for (int ma = 0; ma <= s1.cutoff(); ++ma)
      for (int mb = 0; mb <= s1.cutoff(); ++mb)
        for (int na = 0; na <= s1.cutoff(); ++na) {
          const int nb = na - ma + mb;
          if (nb < 0 || nb > s1.cutoff()) continue;
          diff = std::max(diff, std::abs(out.get(ma, mb, na, nb) / out.trace() - s1.get(ma, mb, na, nb) / s1.trace()));
        }
    CAPTURE(r2);
    CHECK(diff < previous);
    previous = diff;
    const auto expected = gaussian::swap_unit_gain(p1, p2);
    CHECK(std::abs(measures::entanglement(out, mw).log_negativity - gaussian::log_negativity(expected)) < 1e-6);
    CHECK(std::abs(measures::fidelity(out, mw) - gaussian::fidelity(expected)) < 1e-6);
    // The elements move by no more than the added noise 2 e^{-2 r2} (times a factor of order one).
    CHECK(diff < 2.0 * std::exp(-2.0 * r2));
  }
  CHECK(previous < 0.05);
}

TEST_CASE("the swapped TMSV pairs teleport with the fidelity of two teleportations in series") {
  // Two-step teleportation (closed form, derived here): a coherent state teleported with unit gain
  // through TMSV(r1) gains the noise variance 2 e^{-2 r1} per quadrature (Braunstein & Kimble, PRL
  // 80, 869 (1998)), then through TMSV(r2) another 2 e^{-2 r2}. A coherent state with added
  // Gaussian noise n per quadrature has fidelity 2/(2 + n) with the input, so
  //   F_two-step = 1 / (1 + e^{-2 r1} + e^{-2 r2}).
  // Teleporting through the swapped pair is the same two steps in another order (the swap
  // teleports b1 through pair 2; the resource pair 1 then teleports the input).
  measures::Workspace mw;
  for (auto [r1, r2] : {std::pair{0.5, 0.5}, std::pair{0.3, 0.8}, std::pair{0.9, 0.4}}) {
    const SectorState s1 = sector_tmsv(r1, 60), s2 = sector_tmsv(r2, 60);
    SwapOptions o;
    o.max_dropped = 1e-18;
    const SectorState out = swap(s1, s2, o);
    const double expected = 1.0 / (1.0 + std::exp(-2.0 * r1) + std::exp(-2.0 * r2));
    CAPTURE(r1);
    CAPTURE(r2);
    CHECK(std::abs(measures::fidelity(out, mw) - expected) < 1e-9);
  }
}

TEST_CASE("swap of non-Gaussian pairs follows the characteristic-function form of teleportation") {
  // Marian & Marian, PRA 74, 042306 (2006): unit-gain teleportation multiplies the input's
  // characteristic function by the resource's chi_res(xi*, xi). So the swapped pair's fidelity is
  //   F = int_0^inf du e^{-u} chi_1(u) w_2(u),   chi_1, w_2 = chi(sqrt u, sqrt u) of each pair,
  // evaluated here by an independent route: dense sums over the Fock elements and the
  // Gauss-Laguerre rule in v = 3u (the integrand is e^{-3u} times a polynomial of degree
  // <= 2 N1 + 2 N2). Pairs: the ideal two-sided photon-subtracted TMSV, sum (n+1) x^n |n,n>
  // (Schmidt form), and a TMSV, in both roles.
  auto subtracted = [](double x, int n) {
    std::vector<double> c;
    for (int k = 0; k <= n; ++k) c.push_back((k + 1) * std::pow(x, k));
    return schmidt(c);
  };
  const SectorState sub = subtracted(0.35, 40), tmsv = sector_tmsv(0.5, 40);
  measures::Workspace mw;
  for (int order = 0; order < 2; ++order) {
    const SectorState& s1 = order == 0 ? sub : tmsv;
    const SectorState& s2 = order == 0 ? tmsv : sub;
    SwapOptions o;
    o.max_dropped = 1e-20;
    const SectorState out = swap(s1, s2, o);
    const int nodes = s1.cutoff() + s2.cutoff() + 4;
    const auto rule = measures::gauss_laguerre(nodes);
    const int dim = std::max(s1.cutoff(), s2.cutoff()) + 1;
    Eigen::MatrixXd dm1(s1.cutoff() + 1, s1.cutoff() + 1), dm2(s2.cutoff() + 1, s2.cutoff() + 1);
    (void)dim;
    double f = 0.0;
    for (std::size_t i = 0; i < rule.nodes.size(); ++i) {
      const double v = rule.nodes[i], damp = std::exp(-v / 3.0);
      if (damp == 0.0) break;
      measures::displacement_elements(std::sqrt(v / 3.0), dm1);
      measures::displacement_elements(std::sqrt(v / 3.0), dm2);
      f += rule.scaled_weights[i] * damp * chi_radial(s1, dm1) * chi_radial(s2, dm2) / 3.0;
    }
    f /= s1.trace() * s2.trace();
    CAPTURE(order);
    CHECK(out.truncation_loss() < 1e-15);
    CHECK(std::abs(measures::fidelity(out, mw) - f) < 1e-10);
    CHECK(std::abs(measures::fidelity_radial(out, mw) - f) < 1e-10);
  }
}

TEST_CASE("swap refuses a Bell efficiency of 0 or above 1 and an output cutoff below the input cutoff") {
  const SectorState s = sector_tmsv(0.3, 10);
  SwapOptions o;
  o.bell_efficiency = 0.0;
  CHECK_THROWS_AS(swap(s, s, o), std::invalid_argument);
  o.bell_efficiency = 1.2;
  CHECK_THROWS_AS(swap(s, s, o), std::invalid_argument);
  o.bell_efficiency = 1.0;
  o.output_cutoff = 5;
  CHECK_THROWS_AS(swap(s, s, o), std::invalid_argument);
}

TEST_CASE("a relay point with Gaussian arms equals the covariance-matrix unit-gain swap of its arms") {
  // The relay without heralded steps: each arm is TMST(r, n) with mode b through the link over
  // half the distance, and the station's unit-gain swap adds the arm's EPR variance
  // a + b - 2c and 2 (1 - eta)/eta to the teleported mode (Braunstein & Kimble, PRL 80, 869
  // (1998)): E_N and F of gaussian::swap_unit_gain(arm, arm, eta), to the tolerance.
  point::PointSpec arm;
  arm.source.squeezing_r = 0.6;
  arm.source.thermal_photons = 0.02;
  arm.steps = {steps::make("link")};
  arm.numerics.tolerance = 1e-9;
  for (auto [tau, n_e, eta] : {std::tuple{0.95, 0.05, 1.0}, std::tuple{0.99, 0.5, 0.9}, std::tuple{0.9, 0.0, 0.8}}) {
    arm.channel_b = {tau, n_e};
    const auto form = gaussian::apply(point::source_state(arm.source), Mode::B, arm.channel_b);
    const auto expected = gaussian::swap_unit_gain(form, form, eta);
    const point::RelayResult r = point::evaluate_relay({arm, eta});
    CAPTURE(tau);
    CAPTURE(eta);
    REQUIRE(r.relay.status == Status::ok);
    CHECK(r.relay.truncation_error <= 1e-9);
    CHECK(std::abs(r.relay.log_negativity - gaussian::log_negativity(expected)) < 1e-8);
    CHECK(std::abs(r.relay.fidelity - gaussian::fidelity(expected)) < 1e-8);
    CHECK(r.relay.success_probability == doctest::Approx(1.0).epsilon(1e-9));
  }
}

TEST_CASE("a heralded relay point heralds with the square of an arm's probability") {
  // No quantum memory: both arms must herald in the same trial, P = P_arm^2 and the rate is the
  // trial rate times P (the arm's own P from point::evaluate, which is tested against closed
  // forms elsewhere); the false heralds of two independent arms: 1 - (1 - f)^2.
  point::PointSpec arm;
  arm.source.squeezing_r = 0.4;
  arm.source.bandwidth_hz = 2e6;
  arm.channel_b = {0.97, 0.02};
  arm.counters = {{steps::CounterKind::threshold, 0.43, 8.5e-5, 1e-6, 1e-5}};
  arm.steps = {steps::make("link"), steps::make("tap", Mode::B, {{"transmissivity", 0.9}}, 0)};
  arm.numerics.tolerance = 1e-8;
  const point::RelayResult r = point::evaluate_relay({arm, 0.95});
  REQUIRE(r.relay.status == Status::ok);
  const double p = r.arm.success_probability;
  CHECK(r.relay.success_probability == doctest::Approx(p * p).epsilon(1e-12));
  const double trials = steps::trial_rate_hz(2e6, arm.counters);
  CHECK(r.relay.heralding_rate_hz == doctest::Approx(trials * p * p).epsilon(1e-12));
  const double f = r.arm.false_herald_fraction;
  CHECK(r.relay.false_herald_fraction == doctest::Approx(1.0 - (1.0 - f) * (1.0 - f)).epsilon(1e-12));
  CHECK(r.relay.log_negativity > 0.0);
  CHECK(r.relay.truncation_error <= 1e-8);
  CHECK_THROWS_AS(point::evaluate_relay({arm, 0.0}), InputError);
}

TEST_CASE("swap with a feed-forward gain equals the covariance-matrix swap of the same gain") {
  // Gain g: x_{a2} -> x_{a2} - g x_{b2} + g x_{b1}, so the output is (a1, a2 + g^2 (b1 + b2)
  // - 2 g c2 + g^2 2 (1 - eta)/eta, g c1) (Braunstein & Kimble, PRL 80, 869 (1998), with gain;
  // derived in gaussian::swap_feed_forward). Gains below and above one, two efficiencies.
  measures::Workspace mw;
  const auto p1 = arm(0.5, 0.01, 0.9, 0.05), p2 = arm(0.6, 0.0, 0.85, 0.0);
  const SectorState s1 = fock_pair(p1, 1e-15), s2 = fock_pair(p2, 1e-15);
  for (auto [g, eta] : {std::pair{0.6, 1.0}, std::pair{0.85, 0.9}, std::pair{1.2, 1.0}, std::pair{1.1, 0.95}}) {
    SwapOptions o;
    o.gain = g;
    o.bell_efficiency = eta;
    o.max_dropped = 1e-16;
    const SectorState out = swap(s1, s2, o);
    const auto expected = gaussian::swap_feed_forward(p1, p2, g, eta);
    CAPTURE(g);
    CAPTURE(eta);
    CAPTURE(out.cutoff());
    CHECK(out.truncation_loss() < 1e-12);
    CHECK(std::abs(measures::entanglement(out, mw).log_negativity - gaussian::log_negativity(expected)) < 1e-8);
    CHECK(std::abs(measures::fidelity(out, mw) - gaussian::fidelity(expected)) < 1e-8);
  }
}

TEST_CASE("swap with the matched gain has the fidelity of the conditional Gaussian relay") {
  // The conditional state of an ideal Bell measurement (point::relay_state; PHYSICS.md §9, van
  // Loock & Braunstein, PRA 61, 010302(R) (2000)) has F = 2/(2 + a1 + a2 - (c1 + c2)^2/(b1 + b2))
  // (F = 2/(2 + a + b - 2c) of its standard form). The outcome-averaged state with gain g has
  // F = 2/(2 + a1 + a2 + g^2 (b1 + b2) - 2 g (c1 + c2)), largest at g = (c1 + c2)/(b1 + b2),
  // where the two agree (closed form, derived here). Fock swap at that gain vs the baseline.
  measures::Workspace mw;
  const auto p1 = arm(0.6, 0.02, 0.9, 0.1);
  const auto p2 = arm(0.5, 0.0, 0.95, 0.05);
  const double g = (p1.c + p2.c) / (p1.b + p2.b);
  SwapOptions o;
  o.gain = g;
  o.max_dropped = 1e-16;
  const SectorState out = swap(fock_pair(p1, 1e-15), fock_pair(p2, 1e-15), o);
  CHECK(std::abs(measures::fidelity(out, mw) - gaussian::fidelity(gaussian::swap(p1, p2))) < 1e-8);
  // Two copies of one arm (the relay baseline's geometry): g = c/b.
  const double gs = 2.0 * p1.c / (2.0 * p1.b);
  o.gain = gs;
  const SectorState s = fock_pair(p1, 1e-15);
  const SectorState same = swap(s, s, o);
  CHECK(std::abs(measures::fidelity(same, mw) - gaussian::fidelity(gaussian::swap(p1, p1))) < 1e-8);
  CHECK_THROWS_AS(swap(s, s, SwapOptions{1.0, 0.0}), std::invalid_argument);
}
