// Benchmark of the heralded relay: the unit-gain swap kernel (heraldry/swap.hpp) alone and a
// whole relay point (two heralded arms, the swap, the figures) against one heralded-stage
// point (point::evaluate of the same protocol over the full link), at the demo's numerics
// (auto cutoff, tolerance 1e-10) and its counter and source. Prints a table; timings are the
// median of repeats. Target: a relay point costs no more than about three heralded-stage points.
// Usage: bench_swap [--quick]
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <vector>

#include "heraldry/fock.hpp"
#include "heraldry/measures.hpp"
#include "heraldry/point.hpp"
#include "heraldry/relay.hpp"
#include "heraldry/swap.hpp"

using namespace heraldry;
using namespace heraldry::point;
using steps::CounterKind;

namespace {
using clock_type = std::chrono::steady_clock;
template <class F>
double median_seconds(int repeats, F f) {
  std::vector<double> t;
  for (int i = 0; i < repeats; ++i) {
    const auto t0 = clock_type::now();
    f();
    t.push_back(std::chrono::duration<double>(clock_type::now() - t0).count());
  }
  std::sort(t.begin(), t.end());
  return t[t.size() / 2];
}
}  // namespace

int main(int argc, char** argv) {
  const bool quick = argc > 1 && std::strcmp(argv[1], "--quick") == 0;
  const int repeats = quick ? 1 : 5;
  PointSpec p;
  p.source.squeezing_r = 0.69;  // 6 dB, as protocols/demo.toml
  p.source.thermal_photons = 0.02;
  p.source.bandwidth_hz = 2e6;
  p.counters = {{CounterKind::threshold, 0.43, 8.5e-5, 1e-6, 1e-5}};
  p.numerics.tolerance = 1e-10;
  struct Case {
    const char* name;
    std::vector<steps::StepSpec> steps;
    link::Channel full, half;  // the full link's channel on b, and an arm's (half the path)
  };
  const auto two_taps = std::vector<steps::StepSpec>{steps::make("link"),
                                                     steps::make("tap", Mode::A, {{"transmissivity", 0.95}}, 0),
                                                     steps::make("tap", Mode::B, {{"transmissivity", 0.95}}, 0)};
  const auto gaussian_only = std::vector<steps::StepSpec>{steps::make("link")};
  // Half the path: tau -> sqrt(tau), and the same bath (a uniform medium).
  const std::vector<Case> cases = {
      {"gaussian arms, (0.98, 0.05)", gaussian_only, {0.98, 0.05}, {0.98994949, 0.05}},
      {"subtract both, (0.98, 0.05)", two_taps, {0.98, 0.05}, {0.98994949, 0.05}},
      {"subtract both, (0.9995, 1250)", two_taps, {0.9995, 1250.0}, {0.99974997, 1250.0}},
      {"subtract both, (0.9, 0)", two_taps, {0.9, 0.0}, {0.9486833, 0.0}},
  };
  std::printf("%-30s %6s %6s %8s %8s %9s %9s %9s %9s %9s %7s %9s %9s\n", "case", "N_arm", "N_out", "arm_MB", "out_MB",
              "stage_s", "arm_s", "swap_s", "meas_s", "relay_s", "ratio", "E_N", "E_N_stage");
  for (const auto& c : cases) {
    PointSpec stage = p;
    stage.steps = c.steps;
    stage.channel_b = c.full;
    PointSpec arm = stage;
    arm.channel_a = {1.0, 0.0};
    arm.channel_b = c.half;
    RelaySpec rs{arm, 1.0};
    PointResult stage_result;
    RelayResult relay_result;
    const double stage_s = median_seconds(repeats, [&] { stage_result = evaluate(stage); });
    const double relay_s = median_seconds(repeats, [&] { relay_result = evaluate_relay(rs); });
    // The kernel alone, on a Gaussian pair of the arm's cutoff.
    const int n = relay_result.arm.cutoff;
    const auto form = gaussian::apply(source_state(p.source), Mode::B, c.half);
    const fock::SectorState pair = fock::sector_state(form, n);
    fock::SectorState out(0);
    fock::SwapOptions o;
    o.output_cutoff = std::max(n, relay_result.relay.cutoff);
    const double swap_s = median_seconds(repeats, [&] { out = fock::swap(pair, pair, o); });
    measures::Workspace mw;
    double sink = 0.0;
    const double measures_s = median_seconds(repeats, [&] {
      sink += measures::entanglement(out, mw).log_negativity + measures::fidelity(out, mw);
    });
    const double arm_s = median_seconds(repeats, [&] { sink += evaluate(arm).success_probability; });
    (void)sink;
    std::printf("%-30s %6d %6d %8.3f %8.3f %9.4f %9.4f %9.4f %9.4f %9.4f %7.2f %9.5f %9.5f\n", c.name, n,
                relay_result.relay.cutoff, fock::memory_bytes_for(fock::Engine::sector, n) / 1048576.0,
                fock::memory_bytes_for(fock::Engine::sector, relay_result.relay.cutoff) / 1048576.0, stage_s, arm_s,
                swap_s, measures_s, relay_s, relay_s / stage_s, relay_result.relay.log_negativity,
                stage_result.log_negativity);
  }
  std::printf("stage_s: one heralded-stage point over the full link; arm_s: point::evaluate of one arm (half the\n"
              "distance, the relay's tolerance); swap_s: the swap kernel at the relay's cutoffs; meas_s: E_N and F\n"
              "of the swapped state; relay_s: point::evaluate_relay. ratio = relay_s / stage_s (target <= ~3)\n");
  return 0;
}
