// The measures' scratch memory (the body of heraldry::measures::Workspace). Not public.
#pragma once

#include <optional>
#include <vector>

#include <Eigen/Core>
#include <Eigen/Eigenvalues>

#include "heraldry/measures.hpp"

namespace heraldry::measures {

struct Workspace::Impl {
  // Sector partial transpose: one matrix and one solver per block size 1..N+1, so that
  // SelfAdjointEigenSolver::compute never reallocates.
  int sector_cutoff = -1;
  std::vector<Eigen::MatrixXd> pt_blocks;
  std::vector<Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>> pt_solvers;

  // Dense partial transpose.
  int dense_cutoff = -1;
  Eigen::MatrixXd dense_pt;
  std::optional<Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>> dense_solver;  // engaged by size_dense

  // EPR operator in the block layout of SectorState.
  int epr_cutoff = -1;
  std::vector<Eigen::MatrixXd> epr_blocks;  // index d + N

  // Radial quadrature.
  int radial_cutoff = -1;
  LaguerreRule rule;
  Eigen::MatrixXd displacement;

  void size_sector(int cutoff);
  void size_dense(int cutoff);
  void size_epr(int cutoff);
  void size_radial(int cutoff);
};

namespace detail {
/// Tr rho, refusing states that cannot be normalised.
double checked_trace(double trace, const char* where);
}  // namespace detail

}  // namespace heraldry::measures
