// Negativity, log-negativity and the teleportation fidelity on Fock states.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <boost/math/special_functions/laguerre.hpp>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/measures.hpp"

using namespace heraldry;
using namespace heraldry::fock;
using namespace heraldry::measures;

namespace {

// Schmidt-form pure state sum_n c_n |n, n> (unnormalised on purpose).
SectorState schmidt_state(const std::vector<double>& c) {
  const int cutoff = static_cast<int>(c.size()) - 1;
  SectorState s(cutoff);
  for (int n = 0; n <= cutoff; ++n)
    for (int m = 0; m <= cutoff; ++m) s.set(n, n, m, m, c[n] * c[m]);
  return s;
}

// A random U(1)-symmetric density matrix: every d-block is X X^T with X uniform in [-1, 1].
SectorState random_u1_state(int cutoff, std::mt19937& rng) {
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  SectorState s(cutoff);
  for (int d = -cutoff; d <= cutoff; ++d) {
    const auto size = s.block(d).rows();
    Eigen::MatrixXd x(size, size);
    for (Eigen::Index i = 0; i < x.size(); ++i) x.data()[i] = u(rng) * std::exp(-0.15 * i / size);
    s.block(d) = x * x.transpose();
  }
  s.scale(1.0 / s.trace());
  return s;
}

// Cahill & Glauber, Phys. Rev. 177, 1857 (1969): <m|D(a)|n> for real a, via the associated
// Laguerre polynomial (Boost.Math), in log space for the prefactor.
double displacement_closed_form(int m, int n, double a) {
  const int lo = std::min(m, n), hi = std::max(m, n), k = hi - lo;
  const double u = a * a;
  const double log_pref = 0.5 * (std::lgamma(lo + 1.0) - std::lgamma(hi + 1.0)) + k * std::log(std::abs(a)) - 0.5 * u;
  double sign = 1.0;
  if (k % 2 == 1 && ((m >= n && a < 0) || (m < n && a > 0))) sign = -1.0;
  return sign * std::exp(log_pref) * boost::math::laguerre(static_cast<unsigned>(lo), static_cast<unsigned>(k), u);
}

}  // namespace

TEST_CASE("the two-mode squeezed vacuum has log-negativity 2r/ln2 and negativity (e^(2r)-1)/2") {
  // Vidal & Werner, PRA 65, 032314 (2002): TMSV E_N = 2r / ln 2 (closed form);
  // r = 0.5 -> 1.4426950409, N = 0.8591409142 (docs/physics.md §6.3).
  for (double r : {0.2, 0.5, 1.0}) {
    const auto s = sector_tmsv(r, r < 0.9 ? 60 : 110);
    const auto e = entanglement(s);
    CHECK(e.log_negativity == doctest::Approx(2 * r / std::log(2.0)).epsilon(1e-10));
    CHECK(e.negativity == doctest::Approx((std::exp(2 * r) - 1) / 2).epsilon(1e-10));
  }
  const auto e = entanglement(sector_tmsv(0.5, 60));
  CHECK(std::abs(e.log_negativity - 1.4426950409) < 1e-10);
  CHECK(std::abs(e.negativity - 0.8591409142) < 1e-10);
}

TEST_CASE("the two-mode squeezed vacuum teleports coherent states with fidelity 1/(1+e^(-2r))") {
  // Braunstein & Kimble, PRL 80, 869 (1998): F = 1 / (1 + e^{-2r}) (closed form); r = 0.5 ->
  // 0.7310585786, r = 1 -> 0.8807970780 (docs/physics.md §7.4).
  measures::Workspace work;
  for (double r : {0.3, 0.5, 1.0}) {
    const auto s = sector_tmsv(r, r < 0.9 ? 60 : 110);
    const double exact = 1.0 / (1.0 + std::exp(-2 * r));
    CHECK(fidelity_epr(s, work) == doctest::Approx(exact).epsilon(1e-11));
    CHECK(fidelity_radial(s, work) == doctest::Approx(exact).epsilon(1e-11));
  }
  CHECK(std::abs(fidelity(sector_tmsv(0.5, 60)) - 0.7310585786) < 1e-10);
}

TEST_CASE("the product vacuum gives exactly the classical fidelity 1/2 and no entanglement") {
  // Braunstein, Fuchs & Kimble, J. Mod. Opt. 47, 267 (2000): classical benchmark F = 1/2.
  for (int cutoff : {0, 3, 20}) {
    SectorState s(cutoff);
    s.set(0, 0, 0, 0, 1.0);
    CHECK(fidelity_epr(s) == 0.5);
    CHECK(fidelity_radial(s) == doctest::Approx(0.5).epsilon(1e-14));
    CHECK(entanglement(s).log_negativity == 0.0);
    CHECK(entanglement(s).negativity == 0.0);
  }
}

TEST_CASE("the EPR operator elements match the reference sheet and an mpmath radial integral") {
  // docs/physics.md §7.2 check values (computed): O_{00,00} = 1/2, O_{11,11} = O_{00,11} = O_{10,10} = 1/4,
  // O_{22,22} = O_{11,22} = 3/16.
  CHECK(epr_operator_element(0, 0, 0, 0) == doctest::Approx(0.5).epsilon(1e-15));
  CHECK(epr_operator_element(1, 1, 1, 1) == doctest::Approx(0.25).epsilon(1e-15));
  CHECK(epr_operator_element(0, 0, 1, 1) == doctest::Approx(0.25).epsilon(1e-15));
  CHECK(epr_operator_element(1, 0, 1, 0) == doctest::Approx(0.25).epsilon(1e-15));
  CHECK(epr_operator_element(2, 2, 2, 2) == doctest::Approx(0.1875).epsilon(1e-15));
  CHECK(epr_operator_element(1, 1, 2, 2) == doctest::Approx(0.1875).epsilon(1e-15));
  CHECK(epr_operator_element(1, 0, 0, 0) == 0.0);
  // tests/reference/fock_epr_operator.csv: radial quadrature of Cahill-Glauber elements at 40
  // digits (a different algorithm).
  std::ifstream in(std::string(HERALDRY_TEST_DATA_DIR) + "/reference/fock_epr_operator.csv");
  REQUIRE(in.good());
  std::string line;
  int rows = 0;
  double worst = 0.0;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line[0] == 'm') continue;
    std::stringstream ss(line);
    std::string f[5];
    for (auto& x : f) std::getline(ss, x, ',');
    const double v = epr_operator_element(std::stoi(f[0]), std::stoi(f[1]), std::stoi(f[2]), std::stoi(f[3]));
    worst = std::max(worst, std::abs(v - std::stod(f[4])));
    ++rows;
  }
  MESSAGE("EPR operator vs mpmath: ", rows, " elements, max deviation ", worst);
  CHECK(rows > 60);
  CHECK(worst < 1e-15);
}

TEST_CASE("Fock measures reproduce the Gaussian check values of the reference sheet") {
  // TMST r = 0.5, n_th = 0.02, thermal loss (0.9, 0.1) on B: E_N = 1.2348131414,
  // N = 0.6767543135 (docs/physics.md §6.3), F = 0.7017178606 (§7.4); also against the
  // Gaussian closed forms (Vidal & Werner 2002 with the symplectic spectrum; F = 2/(2+a+b-2c)).
  const auto in = gaussian::tmst(0.5, 0.02);
  const link::Channel ch{0.9, 0.1};
  const auto out = gaussian::apply(in, Mode::B, ch);
  auto kraus = sector_state(in, 40);
  apply_channel(kraus, Mode::B, ch);
  for (const auto* s : {&kraus}) {
    const auto e = entanglement(*s);
    CHECK(std::abs(e.log_negativity - 1.2348131414) < 1e-9);
    CHECK(std::abs(e.negativity - 0.6767543135) < 1e-9);
    CHECK(std::abs(fidelity_epr(*s) - 0.7017178606) < 1e-9);
    CHECK(std::abs(fidelity_radial(*s) - 0.7017178606) < 1e-9);
  }
  const auto closed = sector_state(out, 40);
  CHECK(entanglement(closed).log_negativity == doctest::Approx(gaussian::log_negativity(out)).epsilon(1e-10));
  CHECK(entanglement(closed).negativity == doctest::Approx(gaussian::negativity(out)).epsilon(1e-10));
  CHECK(fidelity(closed) == doctest::Approx(gaussian::fidelity(out)).epsilon(1e-10));
}

TEST_CASE("the ideal photon-subtracted TMSV has the closed-form entanglement and fidelity") {
  // Schmidt state c_n ∝ (n + 1) x^n, x = tanh 0.5 (docs/physics.md §4.4, §6.1, §7.2, derived closed
  // forms): ||rho^{T_B}||_1 = (sum c_n)^2 -> E_N = log2[(1+x)^3 / ((1+x^2)(1-x))] = 2.2595766288,
  // N = 1.8942546916; F = (1+x)^3 (2 - 2x + x^2) / (4 (1 + x^2)) = 0.8302102152.
  const double x = std::tanh(0.5);
  std::vector<double> c(91);
  for (int n = 0; n <= 90; ++n) c[n] = (n + 1) * std::pow(x, n);
  const auto s = schmidt_state(c);  // unnormalised: the measures normalise
  const double norm = std::pow(1 + x, 3) / ((1 + x * x) * (1 - x));
  const auto e = entanglement(s);
  CHECK(e.log_negativity == doctest::Approx(std::log2(norm)).epsilon(1e-12));
  CHECK(std::abs(e.log_negativity - 2.2595766288) < 1e-10);
  CHECK(std::abs(e.negativity - 1.8942546916) < 1e-10);
  const double f = std::pow(1 + x, 3) * (2 - 2 * x + x * x) / (4 * (1 + x * x));
  CHECK(fidelity_epr(s) == doctest::Approx(f).epsilon(1e-12));
  CHECK(fidelity_radial(s) == doctest::Approx(f).epsilon(1e-12));
  CHECK(std::abs(f - 0.8302102152) < 1e-10);
}

TEST_CASE("the measures of a heralded state do not depend on its normalisation") {
  auto s = sector_state(gaussian::apply(gaussian::tmst(0.8, 0.05), Mode::B, {0.95, 0.3}), 30);
  const auto e1 = entanglement(s);
  const double f1 = fidelity_epr(s), r1 = fidelity_radial(s);
  s.scale(3.7e-4);
  CHECK(entanglement(s).log_negativity == doctest::Approx(e1.log_negativity).epsilon(1e-13));
  CHECK(entanglement(s).negativity == doctest::Approx(e1.negativity).epsilon(1e-13));
  CHECK(fidelity_epr(s) == doctest::Approx(f1).epsilon(1e-13));
  CHECK(fidelity_radial(s) == doctest::Approx(r1).epsilon(1e-13));
  s.scale(0.0);
  CHECK_THROWS_AS(entanglement(s), std::invalid_argument);
  CHECK_THROWS_AS(fidelity(s), std::invalid_argument);
}

TEST_CASE("the recurrence for displacement elements matches the Cahill-Glauber Laguerre form") {
  // Cahill & Glauber, Phys. Rev. 177, 1857 (1969), evaluated with Boost.Math's associated
  // Laguerre polynomials (unnormalised, with log-space prefactors).
  for (int cutoff : {30, 150}) {
    Eigen::MatrixXd dm(cutoff + 1, cutoff + 1);
    for (double a : {-1.3, 0.05, 0.7, 2.0, 5.0}) {
      displacement_elements(a, dm);
      double worst = 0.0;
      for (int m = 0; m <= cutoff; m += (cutoff > 40 ? 7 : 1))
        for (int n = 0; n <= cutoff; n += (cutoff > 40 ? 5 : 1))
          worst = std::max(worst, std::abs(dm(m, n) - displacement_closed_form(m, n, a)));
      CHECK(worst < 1e-12);
      CHECK(dm.cwiseAbs().maxCoeff() <= 1.0 + 1e-12);  // |<m|D|n>| <= 1 (unitary)
    }
  }
  // tests/reference/fock_displacement.csv: the same closed form at 60 digits (mpmath), up to
  // photon number 150 and alpha^2 = 300 (the top node of the rule used at cutoff 150).
  std::ifstream in(std::string(HERALDRY_TEST_DATA_DIR) + "/reference/fock_displacement.csv");
  REQUIRE(in.good());
  std::string line, current;
  Eigen::MatrixXd dm(151, 151);
  double worst = 0.0;
  int rows = 0;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line[0] == 'a') continue;
    std::stringstream ss(line);
    std::string f[4];
    for (auto& x : f) std::getline(ss, x, ',');
    if (f[0] != current) {
      current = f[0];
      displacement_elements(std::stod(f[0]), dm);
      CHECK(dm.allFinite());
    }
    worst = std::max(worst, std::abs(dm(std::stoi(f[1]), std::stoi(f[2])) - std::strtod(f[3].c_str(), nullptr)));
    ++rows;
  }
  MESSAGE("displacement recurrence vs mpmath: ", rows, " elements, max deviation ", worst);
  CHECK(rows == 700);
  CHECK(worst < 1e-12);
}

TEST_CASE("the Gauss-Laguerre rule integrates e^(-x) x^k exactly up to degree 2n - 1") {
  // Closed forms: n = 2 has nodes 2 -+ sqrt 2 and weights (2 +- sqrt 2)/4 (Abramowitz & Stegun,
  // Table 25.9); int_0^inf e^{-x} x^k dx = k!.
  const auto two = gauss_laguerre(2);
  CHECK(two.nodes[0] == doctest::Approx(2 - std::sqrt(2.0)).epsilon(1e-15));
  CHECK(two.nodes[1] == doctest::Approx(2 + std::sqrt(2.0)).epsilon(1e-15));
  CHECK(two.scaled_weights[0] * std::exp(-two.nodes[0]) == doctest::Approx((2 + std::sqrt(2.0)) / 4).epsilon(1e-14));
  CHECK(two.scaled_weights[1] * std::exp(-two.nodes[1]) == doctest::Approx((2 - std::sqrt(2.0)) / 4).epsilon(1e-14));
  const int n = 12;
  const auto rule = gauss_laguerre(n);
  for (int k = 0; k <= 2 * n - 1; ++k) {
    double sum = 0.0;
    for (int i = 0; i < n; ++i) sum += rule.scaled_weights[i] * std::exp(-rule.nodes[i]) * std::pow(rule.nodes[i], k);
    CHECK(sum == doctest::Approx(std::tgamma(k + 1.0)).epsilon(1e-12));
  }
  // The large rule used at cutoff 150: weights sum to 1, all finite and positive.
  const auto big = gauss_laguerre(152);
  double total = 0.0;
  for (int i = 0; i < 152; ++i) {
    CHECK(std::isfinite(big.scaled_weights[i]));
    CHECK(big.scaled_weights[i] > 0.0);
    total += big.scaled_weights[i] * std::exp(-big.nodes[i]);
  }
  CHECK(total == doctest::Approx(1.0).epsilon(1e-13));
}

TEST_CASE("the EPR-operator and radial fidelities agree on random mixed states") {
  // Two algorithms for the same integral (docs/physics.md §7.2 vs §7.3).
  std::mt19937 rng(314159);
  measures::Workspace work;
  double worst = 0.0;
  for (int trial = 0; trial < 12; ++trial) {
    const int cutoff = 3 + 3 * trial;
    const auto s = random_u1_state(cutoff, rng);
    worst = std::max(worst, std::abs(fidelity_epr(s, work) - fidelity_radial(s, work)));
  }
  // Non-Gaussian states: photon subtraction a (shift -1, sqrt n) on both modes of a mixed state.
  ShiftOperator a{-1, {}};
  for (int trial = 0; trial < 4; ++trial) {
    const int cutoff = 20 + 10 * trial;
    a.coeff.resize(cutoff + 1);
    for (int n = 0; n <= cutoff; ++n) a.coeff[n] = std::sqrt(double(n));
    auto s = sector_state(gaussian::apply(gaussian::tmst(0.3 + 0.2 * trial, 0.05), Mode::B, {0.9, 0.5}), cutoff);
    apply(s, Mode::A, Operation{{a}});
    apply(s, Mode::B, Operation{{a}});
    worst = std::max(worst, std::abs(fidelity_epr(s, work) - fidelity_radial(s, work)));
  }
  MESSAGE("EPR vs radial fidelity: max deviation ", worst);
  CHECK(worst < 1e-10);
}

TEST_CASE("both fidelity routes stay finite and agree at cutoff 150") {
  const auto form = gaussian::apply(gaussian::tmst(1.5, 0.01), Mode::B, {0.999, 0.5});
  const auto s = sector_state(form, 150);
  measures::Workspace work;
  const double f_epr = fidelity_epr(s, work), f_rad = fidelity_radial(s, work);
  MESSAGE("cutoff 150: F_epr = ", f_epr, ", F_radial = ", f_rad, ", Gaussian ", gaussian::fidelity(form));
  CHECK(std::isfinite(f_epr));
  CHECK(std::isfinite(f_rad));
  CHECK(std::abs(f_epr - f_rad) < 1e-10);
  // Closed form F = 2/(2 + a + b - 2c) (docs/physics.md §7.4), up to the truncation deficit.
  CHECK(std::abs(f_epr - gaussian::fidelity(form)) < 1e-8 + 2 * s.truncation_loss());
}

TEST_CASE("sector and dense engines give the same entanglement and fidelities") {
  // Engine-vs-engine: the dense route diagonalises the full partial transpose.
  measures::Workspace ws, wd;
  for (int cutoff : {5, 10, 15, 20, 25}) {
    const auto form = gaussian::tmst(0.9, 0.02);
    auto s = sector_state(form, cutoff);
    auto d = dense_state(form, cutoff);
    for (int pass = 0; pass < 2; ++pass) {
      const auto es = entanglement(s, ws), ed = entanglement(d, wd);
      CHECK(std::abs(es.log_negativity - ed.log_negativity) < 1e-12);
      CHECK(std::abs(es.negativity - ed.negativity) < 1e-12);
      CHECK(std::abs(fidelity_epr(s, ws) - fidelity_epr(d, wd)) < 1e-12);
      CHECK(std::abs(fidelity_radial(s, ws) - fidelity_radial(d, wd)) < 1e-12);
      const link::Channel ch{0.9995, 1250.0};
      apply_channel(s, Mode::B, ch);
      apply_channel(d, Mode::B, ch);
    }
  }
}

TEST_CASE("a reused workspace gives the same figures as a fresh one") {
  measures::Workspace work;
  std::mt19937 rng(5);
  for (int cutoff : {12, 7, 12}) {
    const auto s = random_u1_state(cutoff, rng);
    const auto fresh = entanglement(s);
    const auto reused = entanglement(s, work);
    CHECK(reused.log_negativity == fresh.log_negativity);
    CHECK(fidelity_epr(s, work) == fidelity_epr(s));
    CHECK(fidelity_radial(s, work) == fidelity_radial(s));
  }
}
