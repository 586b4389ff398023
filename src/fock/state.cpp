// Storage of the two state representations and the conversions between them.
#include <stdexcept>
#include <string>
#include <utility>

#include "fock/detail.hpp"
#include "heraldry/fock.hpp"

namespace heraldry::fock {

namespace {
void require_cutoff(int cutoff) {
  if (cutoff < 0)
    throw std::invalid_argument("heraldry::fock: cutoff must be >= 0, got " + std::to_string(cutoff));
}
bool in_range(int n, int cutoff) { return n >= 0 && n <= cutoff; }
void require_in_range(int ma, int mb, int na, int nb, int cutoff) {
  if (!in_range(ma, cutoff) || !in_range(mb, cutoff) || !in_range(na, cutoff) || !in_range(nb, cutoff))
    throw std::out_of_range("heraldry::fock: photon numbers (" + std::to_string(ma) + "," +
                            std::to_string(mb) + "|" + std::to_string(na) + "," + std::to_string(nb) +
                            ") outside 0.." + std::to_string(cutoff));
}
}  // namespace

// ---------------------------------------------------------------- SectorState

SectorState::SectorState(int cutoff) : cutoff_(cutoff) {
  require_cutoff(cutoff);
  blocks_.resize(static_cast<std::size_t>(2 * cutoff + 1));
  for (int d = -cutoff; d <= cutoff; ++d) {
    const int size = cutoff + 1 - (d < 0 ? -d : d);
    block(d).setZero(size, size);
  }
}

double SectorState::trace() const {
  double t = 0.0;
  for (const auto& b : blocks_) t += b.trace();
  return t;
}

double SectorState::get(int ma, int mb, int na, int nb) const {
  if (ma - mb != na - nb) return 0.0;
  if (!in_range(ma, cutoff_) || !in_range(mb, cutoff_) || !in_range(na, cutoff_) || !in_range(nb, cutoff_))
    return 0.0;
  const int d = ma - mb;
  return block(d)(ma - first_photon(d), na - first_photon(d));
}

void SectorState::set(int ma, int mb, int na, int nb, double value) {
  if (ma - mb != na - nb)
    throw std::invalid_argument("heraldry::fock::SectorState::set: element (" + std::to_string(ma) + "," +
                                std::to_string(mb) + "|" + std::to_string(na) + "," + std::to_string(nb) +
                                ") breaks the U(1) pattern ma - mb = na - nb");
  require_in_range(ma, mb, na, nb, cutoff_);
  const int d = ma - mb;
  block(d)(ma - first_photon(d), na - first_photon(d)) = value;
}

void SectorState::scale(double f) {
  for (auto& b : blocks_) b *= f;
  truncation_loss_ *= f;
}

void SectorState::set_zero() {
  for (auto& b : blocks_) b.setZero();
  truncation_loss_ = 0.0;
}

std::size_t SectorState::memory_bytes() const {
  std::size_t n = 0;
  for (const auto& b : blocks_) n += static_cast<std::size_t>(b.size());
  return n * sizeof(double);
}

void SectorState::swap(SectorState& other) noexcept {
  std::swap(cutoff_, other.cutoff_);
  std::swap(truncation_loss_, other.truncation_loss_);
  blocks_.swap(other.blocks_);
}

// ---------------------------------------------------------------- DenseState

DenseState::DenseState(int cutoff) : cutoff_(cutoff) {
  require_cutoff(cutoff);
  const int dim = (cutoff + 1) * (cutoff + 1);
  matrix_.setZero(dim, dim);
}

double DenseState::get(int ma, int mb, int na, int nb) const {
  if (!in_range(ma, cutoff_) || !in_range(mb, cutoff_) || !in_range(na, cutoff_) || !in_range(nb, cutoff_))
    return 0.0;
  return matrix_(index(ma, mb), index(na, nb));
}

void DenseState::set(int ma, int mb, int na, int nb, double value) {
  require_in_range(ma, mb, na, nb, cutoff_);
  matrix_(index(ma, mb), index(na, nb)) = value;
}

void DenseState::scale(double f) {
  matrix_ *= f;
  truncation_loss_ *= f;
}

std::size_t DenseState::memory_bytes() const {
  return static_cast<std::size_t>(matrix_.size()) * sizeof(double);
}

void DenseState::swap(DenseState& other) noexcept {
  std::swap(cutoff_, other.cutoff_);
  std::swap(truncation_loss_, other.truncation_loss_);
  matrix_.swap(other.matrix_);
}

// ---------------------------------------------------------------- conversions

DenseState to_dense(const SectorState& s) {
  const int n = s.cutoff();
  DenseState out(n);
  for (int d = -n; d <= n; ++d) {
    const auto& b = s.block(d);
    const int lo = SectorState::first_photon(d);
    for (int i = 0; i < b.rows(); ++i)
      for (int j = 0; j < b.cols(); ++j)
        out.matrix()(out.index(lo + i, lo + i - d), out.index(lo + j, lo + j - d)) = b(i, j);
  }
  out.add_truncation_loss(s.truncation_loss());
  return out;
}

SectorState to_sector(const DenseState& s) {
  const int n = s.cutoff();
  SectorState out(n);
  for (int d = -n; d <= n; ++d) {
    auto& b = out.block(d);
    const int lo = SectorState::first_photon(d);
    for (int i = 0; i < b.rows(); ++i)
      for (int j = 0; j < b.cols(); ++j)
        b(i, j) = s.matrix()(s.index(lo + i, lo + i - d), s.index(lo + j, lo + j - d));
  }
  out.add_truncation_loss(s.truncation_loss());
  return out;
}

namespace detail {
void photon_distribution(const SectorState& s, Mode mode, Eigen::VectorXd& p) {
  const int n = s.cutoff();
  p.setZero(n + 1);
  for (int d = -n; d <= n; ++d) {
    const auto& b = s.block(d);
    const int lo = SectorState::first_photon(d);
    for (int i = 0; i < b.rows(); ++i) p(mode == Mode::A ? lo + i : lo + i - d) += b(i, i);
  }
}

void photon_distribution(const DenseState& s, Mode mode, Eigen::VectorXd& p) {
  const int n = s.cutoff();
  p.setZero(n + 1);
  for (int a = 0; a <= n; ++a)
    for (int b = 0; b <= n; ++b) p(mode == Mode::A ? a : b) += s.matrix()(s.index(a, b), s.index(a, b));
}
}  // namespace detail

Eigen::VectorXd photon_distribution(const SectorState& s, Mode mode) {
  Eigen::VectorXd p;
  detail::photon_distribution(s, mode, p);
  return p;
}

Eigen::VectorXd photon_distribution(const DenseState& s, Mode mode) {
  Eigen::VectorXd p;
  detail::photon_distribution(s, mode, p);
  return p;
}

// ---------------------------------------------------------------- Workspace

SectorState& Workspace::sector_buffer(int cutoff) {
  if (sector_.cutoff() != cutoff) SectorState(cutoff).swap(sector_);
  return sector_;
}

DenseState& Workspace::dense_buffer(int cutoff) {
  if (dense_.cutoff() != cutoff) DenseState(cutoff).swap(dense_);
  return dense_;
}

Eigen::VectorXd& Workspace::distribution_buffer(int cutoff) {
  if (distribution_.size() != cutoff + 1) distribution_.resize(cutoff + 1);
  return distribution_;
}

}  // namespace heraldry::fock
