// Negativity and log-negativity from the spectrum of the partial transpose (docs/physics.md §6.1).
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "measures/workspace.hpp"

namespace heraldry::measures {

Workspace::Workspace() : impl_(std::make_unique<Impl>()) {}
Workspace::~Workspace() = default;
Workspace::Workspace(Workspace&&) noexcept = default;
Workspace& Workspace::operator=(Workspace&&) noexcept = default;

void Workspace::Impl::size_sector(int cutoff) {
  if (sector_cutoff == cutoff) return;
  pt_blocks.clear();
  pt_solvers.clear();
  // Eigen 3.4 leaves a solver's `info` member uninitialised until compute(): relocating an
  // uncomputed solver reads it (undefined behaviour, reported by UBSan). Reserving first makes
  // every solver be constructed in place and never moved.
  pt_blocks.reserve(static_cast<std::size_t>(cutoff) + 1);
  pt_solvers.reserve(static_cast<std::size_t>(cutoff) + 1);
  for (int k = 1; k <= cutoff + 1; ++k) {
    pt_blocks.emplace_back(k, k);
    pt_solvers.emplace_back(k);
  }
  sector_cutoff = cutoff;
}

void Workspace::Impl::size_dense(int cutoff) {
  if (dense_cutoff == cutoff) return;
  const int dim = (cutoff + 1) * (cutoff + 1);
  dense_pt.resize(dim, dim);
  dense_solver.emplace(dim);  // in place, not moved: see size_sector
  dense_cutoff = cutoff;
}

namespace detail {
double checked_trace(double trace, const char* where) {
  if (!(trace > 0.0) || !std::isfinite(trace))
    throw std::invalid_argument(std::string("heraldry::measures::") + where +
                                ": the state has no positive finite trace (Tr rho = " + std::to_string(trace) +
                                "), it cannot be normalised");
  return trace;
}
}  // namespace detail

namespace {
Entanglement from_trace_norm(double trace_norm) {
  const double norm = std::max(1.0, trace_norm);  // ||rho^{T_B}||_1 >= Tr rho = 1
  return {0.5 * (norm - 1.0), std::log2(norm)};
}
}  // namespace

Entanglement entanglement(const fock::SectorState& state, Workspace& work) {
  const double trace = detail::checked_trace(state.trace(), "entanglement");
  const int cutoff = state.cutoff();
  auto& w = work.impl();
  w.size_sector(cutoff);
  double sum = 0.0;
  // Block s of rho^{T_B}: states (m, s - m), max(0, s - N) <= m <= min(s, N);
  // (rho^{T_B})_{(m, s-m), (m', s-m')} = rho_{(m, s-m'), (m', s-m)}, which lives in the
  // d-block d = m + m' - s, row n_a = m, column n_a = m'.
  for (int s = 0; s <= 2 * cutoff; ++s) {
    poll_cancel();
    const int mlo = std::max(0, s - cutoff), mhi = std::min(s, cutoff);
    const int size = mhi - mlo + 1;
    Eigen::MatrixXd& m = w.pt_blocks[static_cast<std::size_t>(size - 1)];
    for (int j = 0; j < size; ++j)
      for (int i = j; i < size; ++i) {  // lower triangle: all the solver reads
        const int d = 2 * mlo + i + j - s;
        const int lo = fock::SectorState::first_photon(d);
        m(i, j) = state.block(d)(mlo + i - lo, mlo + j - lo);
      }
    auto& solver = w.pt_solvers[static_cast<std::size_t>(size - 1)];
    solver.compute(m, Eigen::EigenvaluesOnly);
    sum += solver.eigenvalues().cwiseAbs().sum();
  }
  return from_trace_norm(sum / trace);
}

Entanglement entanglement(const fock::DenseState& state, Workspace& work) {
  const double trace = detail::checked_trace(state.trace(), "entanglement");
  const int cutoff = state.cutoff();
  auto& w = work.impl();
  w.size_dense(cutoff);
  const Eigen::MatrixXd& rho = state.matrix();
  // (rho^{T_B})_{(m,n'),(m',n)} = rho_{(m,n),(m',n')}: transpose each (N+1) x (N+1) sub-block.
  const int dim = cutoff + 1;
  for (int m = 0; m < dim; ++m)
    for (int mp = 0; mp < dim; ++mp)
      w.dense_pt.block(m * dim, mp * dim, dim, dim) = rho.block(m * dim, mp * dim, dim, dim).transpose();
  w.dense_solver->compute(w.dense_pt, Eigen::EigenvaluesOnly);
  return from_trace_norm(w.dense_solver->eigenvalues().cwiseAbs().sum() / trace);
}

Entanglement entanglement(const fock::SectorState& state) {
  Workspace work;
  return entanglement(state, work);
}

Entanglement entanglement(const fock::DenseState& state) {
  Workspace work;
  return entanglement(state, work);
}

}  // namespace heraldry::measures
