// Gaussian layer: closed forms of two-mode Gaussian entanglement and teleportation.
#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "heraldry/crossing.hpp"
#include "heraldry/gaussian.hpp"

using namespace heraldry;
using namespace heraldry::gaussian;
using doctest::Approx;

TEST_CASE("TMSV log-negativity equals 2r / ln 2 and negativity (e^{2r} - 1)/2") {
  // Vidal & Werner, PRA 65, 032314 (2002): E_N = -log2 nu~_-, nu~_- = e^{-2r} for a TMSV.
  for (double r : {0.1, 0.5, 1.0, 2.0}) {
    const StandardForm s = tmst(r, 0.0);
    // (a, b, c) grow like e^{2r}: nu~_- = a - c loses about e^{4r} ulps to cancellation.
    const double budget = 1e-15 * std::exp(4.0 * r) + 1e-14;
    CHECK(log_negativity(s) == Approx(2.0 * r / std::log(2.0)).epsilon(budget));
    CHECK(negativity(s) == Approx((std::exp(2.0 * r) - 1.0) / 2.0).epsilon(budget));
  }
  // docs/physics.md §6.3 check values (computed): r = 0.5 -> 1.4426950409, N = 0.8591409142.
  CHECK(log_negativity(tmst(0.5, 0.0)) == Approx(1.4426950409).epsilon(1e-10));
  CHECK(negativity(tmst(0.5, 0.0)) == Approx(0.8591409142).epsilon(1e-10));
}

TEST_CASE("TMSV teleportation fidelity equals 1 / (1 + e^{-2r})") {
  // Braunstein & Kimble, PRL 80, 869 (1998): unit-gain coherent-state fidelity with a TMSV resource.
  for (double r : {0.0, 0.3, 0.5, 1.0, 3.0})
    CHECK(fidelity(tmst(r, 0.0)) == Approx(1.0 / (1.0 + std::exp(-2.0 * r))).epsilon(1e-14));
  CHECK(fidelity(tmst(0.5, 0.0)) == Approx(0.7310585786).epsilon(1e-10));
}

TEST_CASE("a product of vacua teleports at the classical bound of one half") {
  // Braunstein, Fuchs & Kimble, J. Mod. Opt. 47, 267 (2000): classical benchmark F = 1/2.
  CHECK(fidelity(StandardForm{1.0, 1.0, 0.0}) == 0.5);
  CHECK(log_negativity(StandardForm{1.0, 1.0, 0.0}) == 0.0);
}

TEST_CASE("thermal loss on a TMST reproduces the sheet's standard form, E_N and fidelity") {
  // docs/physics.md §6.3 / §7.4 (computed check values): TMST r = 0.5, n_th = 0.02, loss (0.9, 0.1) on B.
  const StandardForm s = apply(tmst(0.5, 0.02), Mode::B, {0.9, 0.1});
  CHECK(s.a == Approx(1.6048038602).epsilon(1e-10));
  CHECK(s.b == Approx(1.5643234742).epsilon(1e-10));
  CHECK(s.c == Approx(1.1594894940).epsilon(1e-10));
  CHECK(log_negativity(s) == Approx(1.2348131414).epsilon(1e-10));
  CHECK(negativity(s) == Approx(0.6767543135).epsilon(1e-10));
  CHECK(fidelity(s) == Approx(0.7017178606).epsilon(1e-10));
  // Closed form of the one-sided fidelity, docs/physics.md §7.4.
  const double r = 0.5, n = 0.02, tau = 0.9, ne = 0.1;
  const double f = 2.0 / (2.0 + (2 * n + 1) * ((1 + tau) * std::cosh(2 * r) - 2 * std::sqrt(tau) * std::sinh(2 * r)) +
                          (1 - tau) * (2 * ne + 1));
  CHECK(fidelity(s) == Approx(f).epsilon(1e-14));
}

TEST_CASE("the general-covariance formulas agree with the standard-form ones") {
  // Adesso & Illuminati, PRA 72, 032334 (2005): nu~_- from the seralian-like Delta~ (general two-mode CM).
  const StandardForm s = apply(apply(tmst(0.8, 0.1), Mode::A, {0.7, 2.0}), Mode::B, {0.95, 10.0});
  CHECK(smallest_pt_symplectic(covariance(s)) == Approx(smallest_pt_symplectic(s)).epsilon(1e-12));
  CHECK(fidelity(covariance(s)) == Approx(fidelity(s)).epsilon(1e-12));
}

TEST_CASE("entanglement under one-sided thermal loss dies at n_E = tau / (1 - tau) whatever the squeezing") {
  // docs/physics.md §2.5 (closed form): (a-1)(b-1) < c^2 <=> n_E < tau/(1-tau) for a TMSV.
  const double tau = 0.99;
  const double threshold = tau / (1.0 - tau);
  for (double r : {0.5, 1.0, 2.0}) {
    CHECK(log_negativity(apply(tmst(r, 0.0), Mode::B, {tau, threshold * (1 - 1e-6)})) > 0.0);
    CHECK(log_negativity(apply(tmst(r, 0.0), Mode::B, {tau, threshold * (1 + 1e-6)})) == 0.0);
  }
}

TEST_CASE("the PLOB bound of a pure-loss channel is -log2(1 - tau)") {
  // Pirandola, Laurenza, Ottaviani & Banchi, Nat. Commun. 8, 15043 (2017).
  for (double tau : {0.1, 0.5, 0.9, 0.999})
    CHECK(plob_bound({tau, 0.0}) == Approx(-std::log2(1.0 - tau)).epsilon(1e-13));
  // Reverse coherent information equals it for pure loss (Pirandola et al., PRL 102, 050503 (2009)).
  CHECK(rci_bound({0.5, 0.0}) == Approx(1.0).epsilon(1e-14));
}

TEST_CASE("thermal-loss capacity bounds reproduce the sheet's table and vanish when entanglement breaking") {
  // docs/physics.md §8 table (computed; thermal-loss formulas from memory of PLOB 2017 and RCI 2009).
  struct Row { double tau, n, plob, rci; };
  for (const Row& row : {Row{0.5, 0.1, 0.616553, 0.516553}, Row{0.9, 1.0, 1.473931, 1.321928},
                         Row{0.9999, 1250.0, 1.737074, 1.556728}, Row{0.99995, 1249.7, 2.647223, 2.557074}}) {
    CHECK(plob_bound({row.tau, row.n}) == Approx(row.plob).epsilon(2e-6));
    CHECK(rci_bound({row.tau, row.n}) == Approx(row.rci).epsilon(2e-6));
  }
  CHECK(plob_bound({0.999, 1250.0}) == 0.0);  // n_E > tau / (1 - tau) = 999
  CHECK(rci_bound({0.999, 1250.0}) == 0.0);
}

TEST_CASE("Gaussian entanglement swapping of two TMSVs gives tanh r' = tanh^2 r") {
  // van Loock & Braunstein, PRA 61, 010302(R) (2000); conditional CM of docs/physics.md §9 (computed values).
  const StandardForm out = swap(tmst(0.5, 0.0), tmst(0.5, 0.0));
  CHECK(out.a == Approx(1.0955674542).epsilon(1e-10));
  CHECK(out.c == Approx(0.4475131806).epsilon(1e-10));
  const double rp = std::atanh(std::pow(std::tanh(0.5), 2));
  CHECK(out.a == Approx(std::cosh(2 * rp)).epsilon(1e-13));
  CHECK(log_negativity(out) == Approx(0.625813).epsilon(1e-6));
  const StandardForm noisy = apply(tmst(0.5, 0.02), Mode::B, {0.9, 0.1});
  const StandardForm out2 = swap(noisy, noisy);
  CHECK(out2.a == Approx(1.1750922600).epsilon(1e-10));
  CHECK(out2.c == Approx(0.4297116002).epsilon(1e-10));
  CHECK(log_negativity(out2) == Approx(0.423951).epsilon(1e-6));
}

TEST_CASE("the crossing finder locates the one-sided survival distance of a closed form") {
  // docs/physics.md §2.6 (closed form): L_max = ln((n+1)/n) / mu for a TMSV sent one way.
  const double mu = 2.006e-6, n = 1249.697;
  auto signed_en = [&](double L) {
    return -std::log2(smallest_pt_symplectic(apply(tmst(1.0, 0.0), Mode::B, {std::exp(-mu * L), n})));
  };
  std::vector<double> grid;
  for (int i = 0; i <= 10; ++i) grid.push_back(50.0 * i);
  const Crossing c = last_downward_crossing(signed_en, grid);
  REQUIRE(c.kind == Crossing::Kind::crossed);
  CHECK(c.distance == Approx(std::log((n + 1) / n) / mu).epsilon(1e-9));
  CHECK(last_downward_crossing(signed_en, std::vector<double>{500.0, 600.0}).kind == Crossing::Kind::never_positive);
  CHECK(last_downward_crossing(signed_en, std::vector<double>{10.0, 20.0}).kind == Crossing::Kind::beyond_grid);
}
