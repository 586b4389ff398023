// The steps on Fock states: closed forms of photon subtraction, noiseless amplification,
// scissors and addition, and the sector engine against the dense one on every step.
#include <cmath>
#include <doctest/doctest.h>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/measures.hpp"
#include "heraldry/point.hpp"
#include "heraldry/steps.hpp"
#include "steps/detail.hpp"
#include "test_core_steps_support.hpp"

using namespace heraldry;
using namespace heraldry::steps;
using namespace heraldry::point;

namespace {

CounterModel ideal_resolving() { return {CounterKind::resolving, 1.0, 0.0, 1e-6, 0.0}; }

// log2 ||rho^{T_B}||_1 of a normalised pure Schmidt state sum c_n |n,n>: log2 (sum c_n)^2 / sum c_n^2
// (closed form, Vidal & Werner, PRA 65, 032314 (2002)).
double schmidt_log_negativity(const std::vector<double>& c) {
  double s = 0.0, s2 = 0.0;
  for (double x : c) s += x, s2 += x * x;
  return std::log2(s * s / s2);
}

// Largest |element| difference between a sector state (normalised) and sum c_n |n,n> (normalised).
double distance_to_schmidt(const fock::SectorState& st, const std::vector<double>& c) {
  double s2 = 0.0;
  for (double x : c) s2 += x * x;
  const double tr = st.trace();
  double worst = 0.0;
  const int n = st.cutoff();
  for (int ma = 0; ma <= n; ++ma)
    for (int mb = 0; mb <= n; ++mb)
      for (int na = 0; na <= n; ++na) {
        const int nb = na - (ma - mb);
        if (nb < 0 || nb > n) continue;
        double want = 0.0;
        if (ma == mb && na == nb && ma < static_cast<int>(c.size()) && na < static_cast<int>(c.size()))
          want = c[ma] * c[na] / s2;
        worst = std::max(worst, std::abs(st.get(ma, mb, na, nb) / tr - want));
      }
  return worst;
}

}  // namespace

TEST_CASE("ideal two-sided subtraction from TMSV gives sum (n+1) (lambda T)^n |n,n> with the closed-form P") {
  // Resolving counters, eta = 1, nu = 0, one count each: M_1 x M_1 maps TMSV to
  // sum (n+1) x^n |n,n>, x = lambda T (closed form); P_11 = (1-l^2)(1-T)^2 l^2 (1 + l^2 T^2)/(1 - l^2 T^2)^3;
  // E_N = log2[(1+x)^3 / ((1+x^2)(1-x))]; F = (1+x)^3 (2 - 2x + x^2) / (4 (1 + x^2)) (closed forms,
  // Schmidt-form resource; Opatrny, Kurizki & Welsch, PRA 61, 032302 (2000) for the effect).
  const double r = 0.5, lambda = std::tanh(r);
  for (double t : {0.9, 0.95}) {
    auto st = fock::sector_tmsv(r, 60);
    fock::apply(st, Mode::A, tap_operation(t, ideal_resolving(), 1, 60));
    fock::apply(st, Mode::B, tap_operation(t, ideal_resolving(), 1, 60));
    const double x = lambda * t, l2 = lambda * lambda;
    const double p = (1 - l2) * (1 - t) * (1 - t) * l2 * (1 + l2 * t * t) / std::pow(1 - l2 * t * t, 3);
    CHECK(st.trace() == doctest::Approx(p).epsilon(1e-12));
    std::vector<double> c;
    for (int n = 0; n <= 59; ++n) c.push_back((n + 1) * std::pow(x, n));
    CHECK(distance_to_schmidt(st, c) < 1e-14);
    const auto e = measures::entanglement(st);
    CHECK(e.log_negativity == doctest::Approx(std::log2(std::pow(1 + x, 3) / ((1 + x * x) * (1 - x)))).epsilon(1e-12));
    const double f = std::pow(1 + x, 3) * (2 - 2 * x + x * x) / (4 * (1 + x * x));
    CHECK(measures::fidelity(st) == doctest::Approx(f).epsilon(1e-12));
    CHECK(f > (1 + lambda) / 2);  // above the TMSV's (1 + lambda)/2
  }
}

TEST_CASE("threshold subtraction in the limit T -> 1 approaches a x b on TMSV with P/(1-T)^2 -> <nA nB>") {
  // rho~ = (1-T)^2 (a x b) rho (a^dag x b^dag) + O((1-T)^3) (closed-form limit):
  // <nA nB> = l^2 (1 + l^2)/(1 - l^2)^2 = 0.419008605 for r = 0.5; corrections linear in 1 - T.
  const double r = 0.5, l = std::tanh(r), l2 = l * l;
  const double limit = l2 * (1 + l2) / ((1 - l2) * (1 - l2));
  const CounterModel ideal{CounterKind::threshold, 1.0, 0.0, 1e-6, 0.0};
  std::vector<double> c;
  for (int n = 0; n <= 49; ++n) c.push_back((n + 1) * std::pow(l, n));
  for (double t : {0.999, 0.9999}) {
    auto st = fock::sector_tmsv(r, 50);
    fock::apply(st, Mode::A, tap_operation(t, ideal, 1, 50));
    fock::apply(st, Mode::B, tap_operation(t, ideal, 1, 50));
    const double ratio = st.trace() / ((1 - t) * (1 - t));
    CHECK(std::abs(ratio - limit) / limit < 2.0 * (1 - t));
    CHECK(distance_to_schmidt(st, c) < 1.5 * (1 - t));
  }
}

TEST_CASE("the ideal noiseless amplifier maps TMSV(lambda) to TMSV(g lambda)") {
  // Ralph & Lund, AIP Conf. Proc. 1110, 155 (2009): g^n sum l^n |n,n> = sum (g l)^n |n,n>.
  const double r = 0.5, g = 1.5, x = g * std::tanh(r);
  auto st = fock::sector_tmsv(r, 80);
  fock::apply(st, Mode::B, amplify_operation(g, 0, 80));
  std::vector<double> c;
  for (int n = 0; n <= 80; ++n) c.push_back(std::pow(x, n));
  CHECK(distance_to_schmidt(st, c) < 1e-14);
  CHECK(measures::entanglement(st).log_negativity == doctest::Approx(std::log2((1 + x) / (1 - x))).epsilon(1e-9));
}

TEST_CASE("the physical noiseless amplifier g^(n-N) Pi_N on TMSV has the closed-form success probability") {
  // P = (1-l^2) g^{-2N} [1 - (g l)^{2N+2}] / (1 - g^2 l^2) (closed form; g = 1.5, N = 6, r = 0.5:
  // 0.0115986493); the output is sum_{n<=N} (g l)^n |n,n>, whose E_N is the Schmidt closed form
  // (2.241934). The cut weight is the TMSV tail l^{2(N+1)} (closed form).
  const double r = 0.5, l = std::tanh(r), g = 1.5;
  const int big_n = 6;
  auto st = fock::sector_tmsv(r, 40);
  const double p = (1 - l * l) * std::pow(g, -2.0 * big_n) * (1 - std::pow(g * l, 2.0 * big_n + 2)) / (1 - g * g * l * l);
  CHECK(p == doctest::Approx(0.0115986493).epsilon(1e-8));
  fock::Workspace work;
  StepContext context;
  context.work = &work;
  const StepSpec step = make("amplify", Mode::B, {{"gain", g}, {"max_photons", big_n}});
  apply(st, step, context);
  CHECK(st.trace() == doctest::Approx(p).epsilon(1e-12));
  std::vector<double> c;
  for (int n = 0; n <= big_n; ++n) c.push_back(std::pow(g * l, n));
  CHECK(measures::entanglement(st).log_negativity == doctest::Approx(schmidt_log_negativity(c)).epsilon(1e-12));
  CHECK(schmidt_log_negativity(c) == doctest::Approx(2.241934).epsilon(1e-6));
  CHECK(context.amplifier_cut_fraction == doctest::Approx(std::pow(l, 2 * (big_n + 1))).epsilon(1e-9));
}

TEST_CASE("ideal scissors on TMSV give |0,0> + g lambda |1,1> and lose all entanglement without the pi phase") {
  // Pegg, Phillips & Barnett, PRL 81, 1604 (1998); Ralph & Lund 2009 (NLA form): output
  // proportional to |0,0> + x|1,1>, x = g l, P = (1-l^2)[(1-kappa) + kappa l^2],
  // E_N = log2[(1+x)^2/(1+x^2)] (closed forms). kappa = 0.5: P = 0.477198, E_N = 0.816882;
  // kappa = 0.8: P = 0.291648, E_N = 0.997765.
  const double r = 0.5, l = std::tanh(r);
  for (double kappa : {0.5, 0.8}) {
    const double g = std::sqrt(kappa / (1 - kappa)), x = g * l;
    auto st = fock::sector_tmsv(r, 30);
    auto uncorrected = st;
    fock::apply(st, Mode::B, scissors_operation(g, 1.0, ideal_resolving(), 30));
    const double p = (1 - l * l) * ((1 - kappa) + kappa * l * l);
    CHECK(st.trace() == doctest::Approx(p).epsilon(1e-12));
    CHECK(p == doctest::Approx(kappa == 0.5 ? 0.477198 : 0.291648).epsilon(2e-6));
    CHECK(distance_to_schmidt(st, {1.0, x}) < 1e-14);
    const double en = std::log2((1 + x) * (1 + x) / (1 + x * x));
    CHECK(measures::entanglement(st).log_negativity == doctest::Approx(en).epsilon(1e-12));
    CHECK(en == doctest::Approx(kappa == 0.5 ? 0.816882 : 0.997765).epsilon(1e-6));
    fock::apply(uncorrected, Mode::B, scissors_operation(g, 1.0, ideal_resolving(), 30, Weighting::full, false));
    CHECK(uncorrected.trace() == doctest::Approx(p).epsilon(1e-12));
    CHECK(measures::entanglement(uncorrected).log_negativity < 1e-12);
  }
}

TEST_CASE("heralded addition then subtraction on TMSV gives sum (n+1) x^n |n,n> with the closed-form P") {
  // M_1 K_add = sqrt(1-T)(tanh s / cosh s) T^{n/2} (n+1) (cosh s)^{-n} (closed form; a a^dag =
  // n + 1, Zavatta, Fiurasek & Bellini, Nat. Photon. 5, 52 (2011)). On TMSV mode B:
  // x = l sqrt(T)/cosh s, y = l^2 T / cosh^2 s, P = (1-T)(tanh^2 s/cosh^2 s)(1-l^2)(1+y)/(1-y)^3.
  // s = 0.1, T = 0.95, r = 0.5: P = 9.0999304180e-4, E_N = 2.1963487171.
  const double r = 0.5, l = std::tanh(r), s = 0.1, t = 0.95;
  auto st = fock::sector_tmsv(r, 60);
  fock::apply(st, Mode::B, add_operation(s, ideal_resolving(), 1, 60));
  fock::apply(st, Mode::B, tap_operation(t, ideal_resolving(), 1, 60));
  const double ch = std::cosh(s), th = std::tanh(s);
  const double x = l * std::sqrt(t) / ch, y = l * l * t / (ch * ch);
  const double p = (1 - t) * (th * th / (ch * ch)) * (1 - l * l) * (1 + y) / std::pow(1 - y, 3);
  CHECK(p == doctest::Approx(9.0999304180e-4).epsilon(1e-10));
  CHECK(st.trace() == doctest::Approx(p).epsilon(1e-11));
  const double en = std::log2(std::pow(1 + x, 3) / ((1 + x * x) * (1 - x)));
  CHECK(en == doctest::Approx(2.1963487171).epsilon(1e-10));
  CHECK(measures::entanglement(st).log_negativity == doctest::Approx(en).epsilon(1e-10));
}

TEST_CASE("the readings of a tap counter partition the trace") {
  // sum over readings of sum_k w(k) A_k^T A_k = I (completeness of the counter POVM and of the
  // loss Kraus set): click + no-click, and resolving counts j = 0..many, add up to the input trace.
  const auto input = fock::sector_state(gaussian::apply(gaussian::tmst(0.6, 0.03), Mode::B, {0.85, 0.2}), 25);
  const CounterModel thr{CounterKind::threshold, 0.6, 1e-3, 1e-6, 0.0};
  const CounterModel res{CounterKind::resolving, 0.7, 0.05, 1e-6, 0.0};
  double sum_thr = 0.0, sum_res = 0.0;
  for (int reading = 0; reading <= 1; ++reading) {
    auto st = input;
    fock::apply(st, Mode::A, tap_operation(0.8, thr, reading, 25));
    sum_thr += st.trace();
  }
  for (int j = 0; j <= 40; ++j) {
    auto st = input;
    fock::apply(st, Mode::B, tap_operation(0.8, res, j, 25));
    sum_res += st.trace();
  }
  CHECK(sum_thr == doctest::Approx(input.trace()).epsilon(1e-13));
  CHECK(sum_res == doctest::Approx(input.trace()).epsilon(1e-13));
}

TEST_CASE("the sector and dense engines agree to 1e-12 on every step") {
  // engine-vs-engine: same Kraus sets on the U(1) blocks and on the plain matrix.
  const int cutoff = 12;
  const auto form = gaussian::apply(gaussian::tmst(0.5, 0.05), Mode::B, {0.9, 0.1});
  const std::vector<CounterModel> counters = {{CounterKind::threshold, 0.6, 1e-3, 1e-6, 0.0},
                                              {CounterKind::resolving, 0.8, 0.02, 1e-6, 0.0}};
  const double frequency = 5e9;
  const std::vector<StepSpec> all = {
      make("link"),
      make("tap", Mode::A, {{"transmissivity", 0.9}}, 0),
      make("add", Mode::B, {{"squeezing", 0.2}}, 1),
      make("amplify", Mode::A, {{"gain", 1.3}, {"max_photons", 8}}),
      make("scissors", Mode::B, {{"gain", 1.2}, {"photon_source_efficiency", 0.9}}, 0),
      // a loss at the temperature whose Planck occupation at 5 GHz is 0.5 photons
      make("loss", Mode::A, {{"transmissivity", 0.8}, {"temperature_k", steps_test::temperature_for_occupation(0.5, frequency)}}),
      make("tap", Mode::B, {{"transmissivity", 0.7}, {"counts", 2}}, 1),
  };
  for (const auto& step : all) {
    CAPTURE(step.type->name);
    auto sector = fock::sector_state(form, cutoff);
    auto dense = fock::dense_state(form, cutoff);
    fock::Workspace w1, w2;
    StepContext c1, c2;
    c1.counter = c2.counter = step.counter >= 0 ? &counters[static_cast<std::size_t>(step.counter)] : nullptr;
    c1.frequency_hz = c2.frequency_hz = frequency;
    c1.link_a = c2.link_a = {0.97, 0.02};
    c1.link_b = c2.link_b = {0.9, 3.0};
    c1.work = &w1;
    c2.work = &w2;
    apply(sector, step, c1);
    apply(dense, step, c2);
    const auto converted = fock::to_dense(sector);
    CHECK((converted.matrix() - dense.matrix()).cwiseAbs().maxCoeff() < 1e-12);
    CHECK(sector.truncation_loss() == doctest::Approx(dense.truncation_loss()).epsilon(1e-12));
    CHECK(c1.amplifier_cut_fraction == doctest::Approx(c2.amplifier_cut_fraction).epsilon(1e-12));
    CHECK(sector.trace() > 0.0);
  }
}
