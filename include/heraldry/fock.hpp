// The truncated Fock-space engine: two-mode density matrices that keep the U(1) symmetry
// (blocks of fixed d = n_a - n_b), one-mode Kraus operations, and the Gaussian-to-Fock closed
// form. DenseState is the plain reference representation with the same operations.
// Conventions: PHYSICS.md §0 and §3; per-mode cutoff N means photon numbers 0..N.
#pragma once

#include <cstddef>
#include <vector>

#include <Eigen/Core>

#include "heraldry/common.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"

namespace heraldry::fock {

enum class Engine { sector, dense };

/// A one-mode operator with a fixed photon-number shift: K |n> = coeff[n] |n + shift>, n = 0..N.
/// Every operator the tool needs (loss and amplifier Kraus operators, taps, g^n, scissors,
/// heralded addition) has this form, which is what keeps states U(1)-symmetric.
struct ShiftOperator {
  int shift = 0;
  std::vector<double> coeff;  // indexed by the input photon number n
};

/// rho -> sum_k K_k rho K_k^dagger on one mode (trace non-increasing).
struct Operation {
  std::vector<ShiftOperator> kraus;
};

/// Two-mode state stored as its U(1) blocks: rho_{(m,n),(m',n')} with m - n = m' - n' = d.
/// Block d (|d| <= N) is a real symmetric matrix over the pairs (n_a, n_a - d),
/// n_a = max(0, d) .. min(N, N + d); row i holds n_a = max(0, d) + i.
class SectorState;
/// The plain (N+1)^2 x (N+1)^2 matrix, flattened index n_a (N+1) + n_b.
class DenseState;

}  // namespace heraldry::fock
