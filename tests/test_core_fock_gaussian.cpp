// Fock engine vs Gaussian layer on random links, and the choice of the cutoff.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <string>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/measures.hpp"

using namespace heraldry;
using namespace heraldry::fock;

namespace {

// The tightest truncation tolerance of 1e-15 .. 1e-9 whose cutoff stays <= 80 (run time).
// E_N converges more slowly than the trace (its error goes roughly like deficit^(2/3) here:
// the partial transpose weighs amplitudes, not probabilities), hence the tight tolerances.
int test_cutoff(const gaussian::StandardForm& form) {
  int cutoff = 0;
  for (double tol : {1e-15, 1e-14, 1e-13, 1e-12, 1e-11, 1e-10, 1e-9}) {
    cutoff = auto_cutoff_gaussian(form, tol, Engine::sector, 1e9);
    if (cutoff <= 80) break;
  }
  return cutoff;
}

}  // namespace

TEST_CASE("Fock states from the closed form and from Kraus channels match the Gaussian measures") {
  // Gaussian closed forms: E_N and N from the smallest symplectic eigenvalue of the partial
  // transpose (Vidal & Werner, PRA 65, 032314 (2002)), F = 2/(2 + a + b - 2c) (docs/physics.md §7.4).
  // Route (a): closed form of the output CM (docs/physics.md §3.1). Route (b): closed form of the
  // TMST, then the thermal-loss Kraus channels on each mode (§3.3). Fixed seed.
  std::mt19937 rng(20250611);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  fock::Workspace fw;
  measures::Workspace mw;
  double worst_e = 0.0, worst_n = 0.0, worst_f = 0.0;
  int hot_cases = 0, largest_cutoff = 0;
  for (int trial = 0; trial < 24; ++trial) {
    const bool hot = trial % 3 == 2;  // mode B through a 300 K environment, n_E = 1250
    const double r = hot ? 0.1 + 0.5 * u(rng) : 0.1 + 1.1 * u(rng);
    const double n_th = 0.1 * u(rng);
    link::Channel ca, cb;
    if (hot) {
      ca = {0.8 + 0.2 * u(rng), 0.1 * u(rng)};
      const double added = trial == 2 ? 3.0 : 3.0 * u(rng);  // (1 - tau) n_E up to 3
      cb = {1.0 - added / 1250.0, 1250.0};
      ++hot_cases;
    } else {
      ca = {0.5 + 0.5 * u(rng), 0.5 * u(rng)};
      cb = {0.5 + 0.5 * u(rng), 2.0 * u(rng)};
    }
    const auto in = gaussian::tmst(r, n_th);
    const auto out = gaussian::apply(gaussian::apply(in, Mode::A, ca), Mode::B, cb);
    const int cutoff = test_cutoff(out);
    largest_cutoff = std::max(largest_cutoff, cutoff);

    const auto closed = sector_state(out, cutoff);
    auto kraus = sector_state(in, cutoff);
    apply_channel(kraus, Mode::A, ca, fw);
    apply_channel(kraus, Mode::B, cb, fw);
    CHECK(std::abs(kraus.trace() + kraus.truncation_loss() - 1.0) < 1e-13);

    const double g_e = gaussian::log_negativity(out), g_n = gaussian::negativity(out), g_f = gaussian::fidelity(out);
    for (const SectorState* s : {&closed, static_cast<const SectorState*>(&kraus)}) {
      const auto e = measures::entanglement(*s, mw);
      const double f = measures::fidelity(*s, mw);
      worst_e = std::max(worst_e, std::abs(e.log_negativity - g_e));
      worst_n = std::max(worst_n, std::abs(e.negativity - g_n));
      worst_f = std::max(worst_f, std::abs(f - g_f));
      CHECK(std::abs(e.log_negativity - g_e) < 1e-8);
      CHECK(std::abs(e.negativity - g_n) < 1e-8);
      CHECK(std::abs(f - g_f) < 1e-8);
    }
  }
  MESSAGE("Fock vs Gaussian over 24 links (", hot_cases, " at n_E = 1250, largest cutoff ", largest_cutoff,
          "): max |dE_N| ", worst_e, ", max |dN| ", worst_n, ", max |dF| ", worst_f);
  CHECK(hot_cases >= 8);
  CHECK(largest_cutoff <= 80);
}

TEST_CASE("the entanglement-breaking threshold of a 300 K environment is reproduced in Fock space") {
  // TMSV with thermal loss on one mode: E_N > 0 iff n_E < tau / (1 - tau), independent of r
  // (docs/physics.md §2.5; closed form from the symplectic spectrum).
  const double n_e = 1250.0, threshold = n_e / (n_e + 1.0);
  for (double r : {0.3, 0.6}) {
    auto below = sector_tmsv(r, 40);
    apply_channel(below, Mode::B, {threshold - 2e-5, n_e});
    auto above = sector_tmsv(r, 40);
    apply_channel(above, Mode::B, {threshold + 2e-5, n_e});
    CHECK(measures::entanglement(below).log_negativity < 1e-12);
    CHECK(measures::entanglement(above).log_negativity > 1e-3);
  }
}

TEST_CASE("the automatic cutoff is the smallest one whose trace deficit is below the tolerance") {
  // TMSV: deficit tanh(r)^{2(N+1)} (closed form, docs/physics.md §1.2), so N = ceil(ln tol / (2 ln l)) - 1.
  for (double r : {0.3, 1.0, 1.5})
    for (double tol : {1e-6, 1e-10, 1e-14}) {
      const double l = std::tanh(r);
      int expected = static_cast<int>(std::ceil(std::log(tol) / (2 * std::log(l)))) - 1;
      while (std::pow(l, 2.0 * (expected + 1)) >= tol) ++expected;
      while (expected > 0 && std::pow(l, 2.0 * expected) < tol) --expected;
      CHECK(auto_cutoff_gaussian(gaussian::tmst(r, 0.0), tol, Engine::sector, 1e12) == expected);
    }
  // Mixed states: minimality checked on the deficit itself.
  const auto form = gaussian::apply(gaussian::tmst(0.8, 0.05), Mode::B, {0.9995, 1250.0});
  const int n = auto_cutoff_gaussian(form, 1e-9, Engine::sector, 1e12);
  CHECK(gaussian_trace_deficit(form, n) < 1e-9);
  CHECK(gaussian_trace_deficit(form, n - 1) >= 1e-9);
  CHECK(sector_state(form, n).truncation_loss() < 1e-9);
  // The vacuum needs no photon.
  CHECK(auto_cutoff_gaussian({1.0, 1.0, 0.0}, 1e-12, Engine::dense, 1e3) == 0);
  CHECK_THROWS_AS(auto_cutoff_gaussian(form, 0.0, Engine::sector, 1e12), std::invalid_argument);
}

TEST_CASE("a cutoff beyond the memory budget is refused with the cutoff and memory it needs") {
  const auto form = gaussian::tmst(1.5, 0.5);
  const int needed = auto_cutoff_gaussian(form, 1e-10, Engine::sector, 1e12);
  const double memory = memory_bytes_for(Engine::dense, needed);
  try {
    auto_cutoff_gaussian(form, 1e-10, Engine::dense, 1e8);
    FAIL("expected a CutoffError");
  } catch (const CutoffError& e) {
    CHECK(e.needed_cutoff() == needed);
    CHECK(e.memory_bytes() == memory);
    CHECK(e.limit_bytes() == 1e8);
    CHECK(std::string(e.what()).find(std::to_string(needed)) != std::string::npos);
  }
  // A hopeless request (bath of 1e6 photons): refused at once with a lower bound, not computed.
  CHECK_THROWS_AS(auto_cutoff_gaussian({2e6 + 1, 2e6 + 1, 0.0}, 1e-10, Engine::sector, 1e9), CutoffError);
}

TEST_CASE("the memory estimate is the memory a state actually holds") {
  for (int n : {0, 1, 7, 30}) {
    CHECK(memory_bytes_for(Engine::sector, n) == static_cast<double>(SectorState(n).memory_bytes()));
    CHECK(memory_bytes_for(Engine::dense, n) == static_cast<double>(DenseState(n).memory_bytes()));
  }
  // Dense at cutoff 40: 1681^2 doubles (22.6 MB); sector about (2/3) N^3 doubles.
  CHECK(memory_bytes_for(Engine::dense, 40) == 8.0 * 1681.0 * 1681.0);
  CHECK(memory_bytes_for(Engine::sector, 100) < 8.0 * 0.7 * 101 * 101 * 101);
}
