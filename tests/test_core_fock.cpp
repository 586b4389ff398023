// The Fock engine: closed forms, Kraus operations, the truncation ledger and the two engines.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <Eigen/Eigenvalues>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"

using namespace heraldry;
using namespace heraldry::fock;

namespace {

struct ElementRow {
  std::string label;
  gaussian::StandardForm form;
  int ma, mb, na, nb;
  double value;
};

// tests/reference/fock_gaussian_elements.csv (scripts/reference/fock_gaussian_elements.py).
std::vector<ElementRow> read_element_table() {
  std::ifstream in(std::string(HERALDRY_TEST_DATA_DIR) + "/reference/fock_gaussian_elements.csv");
  REQUIRE(in.good());
  std::vector<ElementRow> rows;
  std::string line;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (!header) {
      header = true;
      continue;
    }
    std::stringstream ss(line);
    std::string f[9];
    for (auto& x : f) std::getline(ss, x, ',');
    rows.push_back({f[0], {std::stod(f[1]), std::stod(f[2]), std::stod(f[3])}, std::stoi(f[4]), std::stoi(f[5]),
                    std::stoi(f[6]), std::stoi(f[7]), std::stod(f[8])});
  }
  return rows;
}

double max_abs_difference(const SectorState& x, const SectorState& y, int up_to) {
  double worst = 0.0;
  for (int ma = 0; ma <= up_to; ++ma)
    for (int mb = 0; mb <= up_to; ++mb)
      for (int na = 0; na <= up_to; ++na) {
        const int nb = na - ma + mb;
        if (nb < 0 || nb > up_to) continue;
        worst = std::max(worst, std::abs(x.get(ma, mb, na, nb) - y.get(ma, mb, na, nb)));
      }
  return worst;
}

}  // namespace

TEST_CASE("the two-mode squeezed vacuum has elements (1 - l^2) l^(n+n') and ledger l^(2(N+1))") {
  // Closed form, docs/physics.md §1.2 (S2(r)|0,0> = sqrt(1 - l^2) sum l^n |n,n>, l = tanh r).
  const double r = 0.5, l = std::tanh(r);
  const auto s = sector_tmsv(r, 12);
  CHECK(s.get(0, 0, 0, 0) == doctest::Approx(0.7864477330).epsilon(1e-10));  // docs/physics.md §1.2
  CHECK(s.get(1, 1, 1, 1) == doctest::Approx(0.1679476963).epsilon(1e-10));
  for (int n = 0; n <= 12; ++n)
    for (int m = 0; m <= 12; ++m)
      CHECK(std::abs(s.get(n, n, m, m) - (1 - l * l) * std::pow(l, n + m)) < 1e-15);
  CHECK(s.get(1, 0, 1, 0) == 0.0);
  CHECK(s.truncation_loss() == doctest::Approx(std::pow(l, 26)).epsilon(1e-13));
  CHECK(std::abs(s.trace() + s.truncation_loss() - 1.0) < 1e-15);
  // r = 1, d = 40 levels: deficit 3.451e-10 (docs/physics.md §1.2; closed form tanh(1)^80).
  CHECK(sector_tmsv(1.0, 39).truncation_loss() == doctest::Approx(3.451e-10).epsilon(1e-3));
  // The general closed form reproduces the TMSV (s_A = s_B = 0, t = l; docs/physics.md §3.1).
  const auto g = sector_state(gaussian::tmst(r, 0.0), 12);
  CHECK(max_abs_difference(g, s, 12) < 1e-15);
}

TEST_CASE("the Gaussian closed form reproduces the TMST element table of the reference sheet") {
  // docs/physics.md §1.2 check values (r = 0.5, n_th = 0.1) (an independent brute-force check).
  const auto s = sector_state(gaussian::tmst(0.5, 0.1), 10);
  CHECK(std::abs(s.get(0, 0, 0, 0) - 0.651105937567) < 1e-12);
  CHECK(std::abs(s.get(1, 0, 1, 0) - 0.046633283613) < 1e-12);
  CHECK(std::abs(s.get(0, 1, 0, 1) - 0.046633283613) < 1e-12);
  CHECK(std::abs(s.get(1, 1, 1, 1) - 0.140580334133) < 1e-12);
  CHECK(std::abs(s.get(0, 0, 1, 1) - 0.298928130357) < 1e-12);
  CHECK(std::abs(s.get(1, 1, 2, 2) - 0.066074996141) < 1e-12);
  CHECK(std::abs(s.get(2, 1, 2, 1) - 0.019897978912) < 1e-12);
  CHECK(std::abs(s.get(1, 0, 2, 1) - 0.030277926098) < 1e-12);
  CHECK(s.get(1, 0, 0, 0) == 0.0);  // outside the U(1) pattern
}

TEST_CASE("the Gaussian closed form matches an amplified-TMSV reference computed with mpmath") {
  // tests/reference/fock_gaussian_elements.csv: a different algorithm (amplifiers on a TMSV,
  // Caruso, Giovannetti & Holevo, NJP 8, 310 (2006)) at 40 digits, including cutoff-150 indices.
  const auto rows = read_element_table();
  REQUIRE(rows.size() > 500);
  std::string current;
  SectorState sector(0);
  DenseState dense(0);
  double worst_small = 0.0, worst_high_rel = 0.0;
  for (const auto& row : rows) {
    if (row.label != current) {
      current = row.label;
      const bool high = row.label.find("high") != std::string::npos;
      sector = sector_state(row.form, high ? 150 : 8);
      dense = dense_state(row.form, high ? 4 : 8);
    }
    const double v = sector.get(row.ma, row.mb, row.na, row.nb);
    if (row.ma <= 8 && row.mb <= 8 && row.na <= 8 && row.nb <= 8) {
      worst_small = std::max(worst_small, std::abs(v - row.value));
      CHECK(std::abs(dense.get(row.ma, row.mb, row.na, row.nb) - row.value) < 1e-13);
    } else {
      REQUIRE(row.value > 0.0);
      worst_high_rel = std::max(worst_high_rel, std::abs(v / row.value - 1.0));
    }
  }
  MESSAGE("closed form vs mpmath: max abs deviation (indices <= 6) ", worst_small,
          ", max relative deviation (indices 56..145) ", worst_high_rel);
  CHECK(worst_small < 1e-14);
  CHECK(worst_high_rel < 1e-11);
}

TEST_CASE("the closed form at cutoff 150 stays finite, positive on the diagonal, and loses only its tail") {
  const auto form = gaussian::apply(gaussian::tmst(1.5, 0.01), Mode::B, {0.999, 0.5});
  const auto s = sector_state(form, 150);
  bool finite = true, diagonal_positive = true;
  for (int d = -150; d <= 150; ++d) {
    finite = finite && s.block(d).allFinite();
    diagonal_positive = diagonal_positive && (s.block(d).diagonal().array() >= 0.0).all();
  }
  CHECK(finite);
  CHECK(diagonal_positive);
  // Trace deficit by an independent route (generating function, docs/physics.md §3.2).
  CHECK(s.truncation_loss() == doctest::Approx(gaussian_trace_deficit(form, 150)).epsilon(1e-8));
}

TEST_CASE("the trace deficit from the generating function agrees with 1 - trace and with closed forms") {
  // Independent route: the elements of the closed form summed, against the power series of G(y, z).
  std::mt19937 rng(20240611);
  std::uniform_real_distribution<double> u01(0.0, 1.0);
  for (int trial = 0; trial < 8; ++trial) {
    auto form = gaussian::tmst(1.2 * u01(rng), 0.3 * u01(rng));
    form = gaussian::apply(form, Mode::A, {0.5 + 0.5 * u01(rng), 2.0 * u01(rng)});
    form = gaussian::apply(form, Mode::B, {0.5 + 0.5 * u01(rng), 2.0 * u01(rng)});
    for (int n : {4, 10, 25}) {
      const double by_sum = 1.0 - sector_state(form, n).trace();
      const double by_series = gaussian_trace_deficit(form, n);
      CHECK(std::abs(by_series - by_sum) < 1e-13 + 1e-11 * by_sum);
    }
  }
  // TMSV: deficit l^{2(N+1)} (closed form, docs/physics.md §1.2), kept to relative 1e-12 down to 1e-200.
  for (double r : {0.3, 1.0, 2.0})
    for (int n : {5, 40, 150}) {
      const double l = std::tanh(r);
      const double exact = std::pow(l, 2.0 * (n + 1));
      CHECK(gaussian_trace_deficit(gaussian::tmst(r, 0.0), n) == doctest::Approx(exact).epsilon(1e-11));
    }
  // Product of thermal states (c = 0): 1 - (1 - q_A^{N+1})(1 - q_B^{N+1}), q = n/(n+1) (closed form).
  const double na = 0.7, nb = 2.5;
  const double qa = na / (na + 1), qb = nb / (nb + 1);
  for (int n : {3, 30, 120}) {
    const double exact = std::pow(qa, n + 1) + std::pow(qb, n + 1) - std::pow(qa, n + 1) * std::pow(qb, n + 1);
    CHECK(gaussian_trace_deficit({2 * na + 1, 2 * nb + 1, 0.0}, n) == doctest::Approx(exact).epsilon(1e-12));
  }
}

TEST_CASE("the loss Kraus operators are complete below the cutoff") {
  // sum_k A_k^T A_k = I on n <= N: sum_k C(n,k) tau^{n-k} (1-tau)^k = 1 (binomial theorem, closed form).
  for (double tau : {0.0, 0.3, 0.9995, 1.0}) {
    const int n = 150;
    const auto op = pure_loss(tau, n);
    Eigen::VectorXd diag = Eigen::VectorXd::Zero(n + 1);
    for (const auto& k : op.kraus) {
      CHECK(k.shift <= 0);
      for (int m = 0; m <= n; ++m) diag(m) += k.coeff[m] * k.coeff[m];
    }
    CHECK((diag.array() - 1.0).abs().maxCoeff() < 1e-12);
  }
  // A_1 |1> = sqrt(1 - tau) |0>, A_0 |n> = tau^{n/2} |n> (closed form).
  const auto op = pure_loss(0.64, 5);
  CHECK(op.kraus[0].coeff[3] == doctest::Approx(std::pow(0.8, 3)).epsilon(1e-14));
  CHECK(op.kraus[1].coeff[1] == doctest::Approx(0.6).epsilon(1e-14));
  CHECK(op.kraus[1].coeff[0] == 0.0);
}

TEST_CASE("the amplifier Kraus list, with its lumped tail, is complete below the cutoff") {
  // sum_k |B_k(n)|^2 = 1: the negative-binomial law (closed form); the last operator carries
  // the part k > N, computed from the incomplete beta function.
  for (double gain : {1.0, 1.09, 4.0, 40.0}) {
    const int n = 60;
    const auto op = amplifier(gain, n);
    Eigen::VectorXd diag = Eigen::VectorXd::Zero(n + 1);
    for (const auto& k : op.kraus)
      for (int m = 0; m <= n; ++m) diag(m) += k.coeff[m] * k.coeff[m];
    CHECK((diag.array() - 1.0).abs().maxCoeff() < 1e-12);
  }
}

TEST_CASE("the ledger records exactly the weight the amplifier sends above the cutoff") {
  // Fock state |n> on mode A: the weight kept is P(k <= N - n) of the negative-binomial law
  // C(n+k, k) G^{-(n+1)} (1 - 1/G)^k, summed here term by term (closed form, a different route
  // from the incomplete beta function used by the engine).
  const int cutoff = 20;
  const double gain = 2.5;
  for (int n : {0, 3, 12, 20}) {
    SectorState s(cutoff);
    s.set(n, 0, n, 0, 1.0);
    apply(s, Mode::A, amplifier(gain, cutoff));
    double kept = 0.0;
    for (int k = 0; k <= cutoff - n; ++k)
      kept += std::exp(std::lgamma(n + k + 1.0) - std::lgamma(n + 1.0) - std::lgamma(k + 1.0) -
                       (n + 1) * std::log(gain) + k * std::log(1 - 1 / gain));
    CHECK(s.trace() == doctest::Approx(kept).epsilon(1e-13));
    CHECK(std::abs(s.truncation_loss() - (1.0 - kept)) < 1e-14);
  }
}

TEST_CASE("the amplifier maps the mean photon number to G<n> + G - 1 and loss to tau<n>") {
  // Closed form: the amplifier acts on the CM as V -> G V + (G - 1) I and n = (a - 1)/2, so
  // <n> -> G <n> + G - 1; pure loss V -> tau V + (1 - tau) I gives <n> -> tau <n>.
  const auto form = gaussian::tmst(0.6, 0.05);
  const double mean_in = (form.a - 1) / 2;
  const int cutoff = 90;
  for (double gain : {1.3, 2.0}) {
    auto s = sector_state(form, cutoff);
    apply(s, Mode::B, amplifier(gain, cutoff));
    const auto p = photon_distribution(s, Mode::B);
    double mean = 0.0;
    for (int n = 0; n <= cutoff; ++n) mean += n * p(n);
    CHECK(s.truncation_loss() < 1e-10);
    CHECK(mean / s.trace() == doctest::Approx(gain * mean_in + gain - 1).epsilon(1e-8));
  }
  auto s = sector_state(form, cutoff);
  apply(s, Mode::A, pure_loss(0.35, cutoff));
  const auto p = photon_distribution(s, Mode::A);
  double mean = 0.0;
  for (int n = 0; n <= cutoff; ++n) mean += n * p(n);
  CHECK(mean == doctest::Approx(0.35 * mean_in).epsilon(1e-10));
}

TEST_CASE("the thermal-loss channel through Kraus operators equals the closed form after the channel") {
  // Two algorithms: Kraus route (loss tau/G then amplifier G, Ivan, Sabapathy & Simon,
  // PRA 84, 042311 (2011)) on the truncated TMST vs the closed form of the output CM
  // (docs/physics.md §3.3 check: tau = 0.7, n_E = 0.3 on B agrees to 2.2e-16).
  const auto in = gaussian::tmst(0.5, 0.1);
  const link::Channel ch{0.7, 0.3};
  const int cutoff = 70;  // low indices are unaffected by the truncation at this cutoff
  auto s = sector_state(in, cutoff);
  apply_channel(s, Mode::B, ch);
  const auto ref = sector_state(gaussian::apply(in, Mode::B, ch), cutoff);
  CHECK(max_abs_difference(s, ref, 10) < 1e-14);
  // n_E = 1250 (5 GHz, 300 K) costs nothing extra.
  auto hot = sector_state(in, cutoff);
  apply_channel(hot, Mode::A, {0.9995, 1250.0});
  const auto hot_ref = sector_state(gaussian::apply(in, Mode::A, {0.9995, 1250.0}), cutoff);
  CHECK(max_abs_difference(hot, hot_ref, 10) < 1e-13);
}

TEST_CASE("trace plus ledger stays one after trace-preserving channels on random states") {
  // Trace preservation of the channel (common practice: invariant on random inputs).
  std::mt19937 rng(7);
  std::uniform_real_distribution<double> u01(0.0, 1.0);
  Workspace work;
  for (int trial = 0; trial < 10; ++trial) {
    const int cutoff = 8 + static_cast<int>(20 * u01(rng));
    auto s = sector_state(gaussian::tmst(1.2 * u01(rng), 0.2 * u01(rng)), cutoff);
    apply_channel(s, Mode::A, {u01(rng), 3.0 * u01(rng)}, work);
    apply_channel(s, Mode::B, {0.997 + 0.003 * u01(rng), 1250.0}, work);
    apply(s, Mode::B, amplifier(1.0 + u01(rng), cutoff), work);
    CHECK(std::abs(s.trace() + s.truncation_loss() - 1.0) < 1e-13);
    CHECK(s.truncation_loss() >= 0.0);
  }
}

TEST_CASE("states stay positive and keep the U(1) pattern after channels") {
  // Positivity of rho after CP maps; the dense engine, which does not assume the symmetry,
  // produces no element outside the d-blocks (docs/physics.md §3.4).
  std::mt19937 rng(11);
  std::uniform_real_distribution<double> u01(0.0, 1.0);
  for (int trial = 0; trial < 6; ++trial) {
    const int cutoff = 6 + trial;
    const auto form = gaussian::tmst(u01(rng), 0.1 * u01(rng));
    auto s = sector_state(form, cutoff);
    auto dense = dense_state(form, cutoff);
    const link::Channel ca{0.3 + 0.7 * u01(rng), u01(rng)}, cb{0.9 + 0.1 * u01(rng), 5.0 * u01(rng)};
    apply_channel(s, Mode::A, ca);
    apply_channel(s, Mode::B, cb);
    apply_channel(dense, Mode::A, ca);
    apply_channel(dense, Mode::B, cb);
    double smallest = 1.0;
    for (int d = -cutoff; d <= cutoff; ++d) {
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(s.block(d), Eigen::EigenvaluesOnly);
      smallest = std::min(smallest, es.eigenvalues().minCoeff());
    }
    CHECK(smallest >= -1e-12);
    double outside = 0.0;
    for (int ma = 0; ma <= cutoff; ++ma)
      for (int mb = 0; mb <= cutoff; ++mb)
        for (int na = 0; na <= cutoff; ++na)
          for (int nb = 0; nb <= cutoff; ++nb)
            if (ma - mb != na - nb) outside = std::max(outside, std::abs(dense.get(ma, mb, na, nb)));
    CHECK(outside == 0.0);
  }
}

TEST_CASE("sector and dense engines give the same elements and ledger after channels") {
  // Engine-vs-engine agreement: the dense kernel works on the full matrix without the U(1) blocks.
  for (int cutoff : {5, 10, 15, 20, 25}) {
    const auto form = gaussian::tmst(0.7, 0.03);
    auto s = sector_state(form, cutoff);
    auto d = dense_state(form, cutoff);
    const link::Channel ca{0.8, 0.2}, cb{0.9995, 1250.0};
    apply_channel(s, Mode::A, ca);
    apply_channel(d, Mode::A, ca);
    apply_channel(s, Mode::B, cb);
    apply_channel(d, Mode::B, cb);
    const auto back = to_dense(s);
    CHECK((back.matrix() - d.matrix()).cwiseAbs().maxCoeff() < 1e-12);
    CHECK(s.truncation_loss() == doctest::Approx(d.truncation_loss()).epsilon(1e-12));
    CHECK((photon_distribution(s, Mode::B) - photon_distribution(d, Mode::B)).cwiseAbs().maxCoeff() < 1e-14);
  }
}

TEST_CASE("a sector state refuses elements outside the U(1) pattern and the cutoff") {
  SectorState s(4);
  CHECK_THROWS_AS(s.set(1, 0, 0, 0, 0.5), std::invalid_argument);
  CHECK_THROWS_AS(s.set(5, 5, 5, 5, 0.5), std::out_of_range);
  s.set(3, 1, 2, 0, 0.25);
  CHECK(s.get(3, 1, 2, 0) == 0.25);
  CHECK(s.get(5, 3, 4, 2) == 0.0);
  CHECK_THROWS_AS(SectorState(-1), std::invalid_argument);
  CHECK_THROWS_AS(sector_state({1.0, 1.0, 0.5}, 4), std::invalid_argument);   // unphysical
  CHECK_THROWS_AS(sector_state({2.0, 2.0, -1.0}, 4), std::invalid_argument);  // c < 0
}

TEST_CASE("a truncated pure state lies 2 sqrt(ledger) away in trace norm, as the header states") {
  // Closed form: for |psi> with weight e above the cutoff, || |psi><psi| - P|psi><psi|P ||_1 =
  // sqrt(4e - 3e^2) (two rank-one projectors; gentle-measurement lemma, Winter, IEEE Trans. Inf.
  // Theory 45, 2481 (1999)). TMSV at cutoff N against the same state at cutoff 200 (e ~ 1e-60).
  const double r = 0.6;
  const auto big = sector_tmsv(r, 200);
  for (int n : {3, 8, 15}) {
    const auto small = sector_tmsv(r, n);
    Eigen::MatrixXd diff = big.block(0);
    diff.topLeftCorner(n + 1, n + 1) -= small.block(0);
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> es(diff, Eigen::EigenvaluesOnly);
    const double distance = es.eigenvalues().cwiseAbs().sum();
    const double e = small.truncation_loss();
    CHECK(distance == doctest::Approx(std::sqrt(4 * e - 3 * e * e)).epsilon(1e-9));
    CHECK(distance > e);  // the ledger alone does not bound the matrix error
  }
}

TEST_CASE("a raising operator sends exactly the weight of the top level above the cutoff") {
  // a^dagger |n> = sqrt(n+1) |n+1> (closed form): only |N> leaves the space, with weight
  // (N + 1) p_N; a lowering operator loses nothing to the cutoff (its failure is not truncation).
  const int cutoff = 10;
  const auto form = gaussian::tmst(0.9, 0.1);
  ShiftOperator up{1, std::vector<double>(cutoff + 1)}, down{-1, std::vector<double>(cutoff + 1)};
  for (int n = 0; n <= cutoff; ++n) {
    up.coeff[n] = std::sqrt(n + 1.0);
    down.coeff[n] = std::sqrt(double(n));
  }
  auto s = sector_state(form, cutoff);
  const double before = s.truncation_loss();
  const double top = photon_distribution(s, Mode::B)(cutoff);
  apply(s, Mode::B, Operation{{up}});
  CHECK(s.truncation_loss() - before == doctest::Approx((cutoff + 1) * top).epsilon(1e-14));
  auto d = dense_state(form, cutoff);
  apply(d, Mode::A, Operation{{down}});
  CHECK(d.truncation_loss() == doctest::Approx(before).epsilon(1e-14));
  // A lowering operator with a coefficient on |0> is a programmer error.
  ShiftOperator bad{-1, {0.5, 1.0}};
  CHECK_THROWS_AS(apply(d, Mode::A, Operation{{bad}}), std::invalid_argument);
}
