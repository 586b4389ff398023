// Prints the cost of one point evaluation (two-sided threshold subtraction after the link) for
// the sector and dense engines at fixed cutoffs, with the figures, so that the gain of the U(1)
// blocks can be read off. Not a test: timings depend on the machine.
#include <chrono>
#include <cstdio>

#include "heraldry/fock.hpp"
#include "heraldry/point.hpp"

using namespace heraldry;
using namespace heraldry::point;
using steps::CounterKind;

int main() {
  PointSpec p;
  p.source.squeezing_r = 0.69;  // 6 dB
  p.source.thermal_photons = 0.02;
  p.channel_b = {0.99, 0.05};
  p.counters = {{CounterKind::threshold, 0.43, 8.5e-5, 1e-6, 1e-5}};
  p.steps = {steps::make("link"), steps::make("tap", Mode::A, {{"transmissivity", 0.95}}, 0),
             steps::make("tap", Mode::B, {{"transmissivity", 0.95}}, 0)};
  p.numerics.tolerance = 0.5;  // fixed cutoffs: report, do not chase the tolerance
  std::printf("%-7s %6s %12s %12s %12s %10s %10s\n", "engine", "cutoff", "P", "E_N", "F", "trunc", "seconds");
  for (int cutoff : {8, 12, 16, 24, 32}) {
    for (auto engine : {fock::Engine::sector, fock::Engine::dense}) {
      if (engine == fock::Engine::dense && cutoff > 24) continue;  // (N+1)^4 doubles and an (N+1)^2 eigen-solve
      p.numerics.engine = engine;
      p.numerics.cutoff = cutoff;
      const auto t0 = std::chrono::steady_clock::now();
      const PointResult r = evaluate(p);
      const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      std::printf("%-7s %6d %12.6e %12.8f %12.8f %10.2e %10.4f\n", engine == fock::Engine::sector ? "sector" : "dense",
                  cutoff, r.success_probability, r.log_negativity, r.fidelity, r.truncation_error, s);
    }
  }
  return 0;
}
