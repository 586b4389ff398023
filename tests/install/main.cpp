// An outside program using the installed heraldry::core: one point of the bare link through the
// Fock engine against the Gaussian closed form, and the Planck occupation at 5 GHz and 300 K.
#include <cmath>
#include <cstdio>

#include "heraldry/link.hpp"
#include "heraldry/point.hpp"

int main() {
  using namespace heraldry;
  // Planck occupation with the exact SI constants (BIPM 2019): 1249.697 photons (closed form).
  const double n = link::planck_occupation(5e9, 300.0);
  point::PointSpec spec;
  spec.source.squeezing_r = 0.5;
  spec.channel_b = {0.9, 0.1};
  spec.steps = {steps::make("link")};
  spec.numerics.tolerance = 1e-8;
  const point::PointResult r = point::evaluate(spec);
  const double gaussian = gaussian::log_negativity(point::bare_state(spec.source, link::LinkBudget{0.0, {}, {spec.channel_b, {}}}));
  std::printf("planck %.6f, E_N Fock %.9f, Gaussian %.9f, status %s\n", n, r.log_negativity, gaussian,
              to_string(r.status));
  const bool ok = std::abs(n - 1249.697) < 1e-3 && r.status == Status::ok && std::abs(r.log_negativity - gaussian) < 1e-6;
  return ok ? 0 : 1;
}
