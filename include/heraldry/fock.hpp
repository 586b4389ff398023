// The truncated Fock-space engine: two-mode density matrices that keep the U(1) symmetry
// (blocks of fixed d = n_a - n_b), one-mode Kraus operations, and the Gaussian-to-Fock closed
// form. DenseState is the plain reference representation with the same operations.
// Conventions: docs/physics.md §0 and §3; per-mode cutoff N means photon numbers 0..N.
//
// The truncation ledger. Every state carries `truncation_loss()`: the sum of every probability
// weight that was dropped because it would have landed above the cutoff (by construction from a
// Gaussian state: 1 - trace of the truncated matrix; by an operation: the diagonal weight each
// Kraus operator sends above N). What it bounds:
//  - the trace: Tr(untruncated result) - Tr(stored) = ledger for trace-preserving operations
//    (trace + ledger = 1) and <= ledger for heralding ones, so a success probability
//    P = Tr rho~ is known to within ledger, i.e. to the relative error ledger / trace;
//  - the matrix: each truncation is a projection, so by the gentle-measurement lemma (Winter,
//    IEEE Trans. Inf. Theory 45, 2481 (1999)) a step that drops weight e moves the state by at
//    most 2 sqrt(e) in trace norm (a pure state truncated by e is exactly sqrt(4e - 3e^2) away),
//    and CP maps do not increase earlier errors: the trace-norm error is <= sum_steps 2 sqrt(e_i)
//    <= 2 sqrt(k ledger) over k truncating steps. It is NOT bounded by the ledger itself.
// In practice the fidelity converges like the ledger and E_N faster than sqrt(ledger)
// (about ledger^(2/3) in the Fock-vs-Gaussian tests): choose the tolerance with that in mind,
// e.g. 1e-15 for E_N to ~1e-9. Nothing is ever renormalised silently.
#pragma once

#include <cstddef>
#include <stdexcept>
#include <string>
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
/// Storage: sum_d (N + 1 - |d|)^2 doubles, about (2/3) N^3.
class SectorState {
public:
  /// The zero matrix at cutoff N >= 0 (photon numbers 0..N per mode), empty ledger.
  explicit SectorState(int cutoff);

  int cutoff() const { return cutoff_; }
  double truncation_loss() const { return truncation_loss_; }
  void add_truncation_loss(double p) { truncation_loss_ += p; }
  double trace() const;

  /// <ma, mb| rho |na, nb>; 0 outside the U(1) pattern (ma - mb != na - nb) or the cutoff.
  double get(int ma, int mb, int na, int nb) const;
  /// Writes one element (not its mirror image: keep the matrix symmetric). Throws
  /// std::invalid_argument outside the U(1) pattern and std::out_of_range beyond the cutoff.
  void set(int ma, int mb, int na, int nb, double value);

  /// Block d = n_a - n_b, -N <= d <= N; row/column i <-> n_a = first_photon(d) + i.
  Eigen::MatrixXd& block(int d) { return blocks_[static_cast<std::size_t>(d + cutoff_)]; }
  const Eigen::MatrixXd& block(int d) const { return blocks_[static_cast<std::size_t>(d + cutoff_)]; }
  /// n_a of the first row of block d: max(0, d).
  static int first_photon(int d) { return d > 0 ? d : 0; }

  /// Multiplies the matrix and the ledger by f >= 0 (e.g. to normalise a heralded state
  /// explicitly: the relative error ledger / trace is unchanged).
  void scale(double f);
  /// The zero matrix and an empty ledger.
  void set_zero();
  std::size_t memory_bytes() const;

  void swap(SectorState& other) noexcept;

private:
  int cutoff_;
  double truncation_loss_ = 0.0;
  std::vector<Eigen::MatrixXd> blocks_;  // index d + N
};

/// The plain (N+1)^2 x (N+1)^2 matrix, flattened index n_a (N+1) + n_b. Makes no use of the
/// U(1) symmetry: it is the reference the sector engine is tested against.
class DenseState {
public:
  explicit DenseState(int cutoff);

  int cutoff() const { return cutoff_; }
  double truncation_loss() const { return truncation_loss_; }
  void add_truncation_loss(double p) { truncation_loss_ += p; }
  double trace() const { return matrix_.trace(); }

  /// <ma, mb| rho |na, nb>; 0 beyond the cutoff.
  double get(int ma, int mb, int na, int nb) const;
  /// Writes one element (not its mirror image). std::out_of_range beyond the cutoff.
  void set(int ma, int mb, int na, int nb, double value);

  int index(int na, int nb) const { return na * (cutoff_ + 1) + nb; }
  Eigen::MatrixXd& matrix() { return matrix_; }
  const Eigen::MatrixXd& matrix() const { return matrix_; }

  void scale(double f);
  /// The zero matrix and an empty ledger.
  void set_zero() {
    matrix_.setZero();
    truncation_loss_ = 0.0;
  }
  std::size_t memory_bytes() const;

  void swap(DenseState& other) noexcept;

private:
  int cutoff_;
  double truncation_loss_ = 0.0;
  Eigen::MatrixXd matrix_;
};

/// Conversions (mainly for tests). to_sector keeps the elements inside the U(1) pattern and
/// ignores the others; both copy the ledger.
DenseState to_dense(const SectorState& s);
SectorState to_sector(const DenseState& s);

/// Unnormalised photon-number distribution of one mode, p_n = sum_j <n,j|rho|n,j> (mode A),
/// n = 0..N. Its sum is the trace.
Eigen::VectorXd photon_distribution(const SectorState& s, Mode mode);
Eigen::VectorXd photon_distribution(const DenseState& s, Mode mode);

// ---------------------------------------------------------------- Gaussian states -> Fock

/// The standard-form Gaussian state truncated at cutoff N, by the closed form of docs/physics.md §3.1
/// (Husimi-function expansion; every term is non-negative, each evaluated in log space, so no
/// cancellation and no overflow at N = 150 and beyond). Cost O(N^4) multiplications, O(N^3)
/// exponentials. Ledger = max(0, 1 - trace). Requires gaussian::is_physical(form) and c >= 0
/// (std::invalid_argument otherwise: a programmer error, the Gaussian layer enforces c >= 0).
SectorState sector_state(const gaussian::StandardForm& form, int cutoff);
DenseState dense_state(const gaussian::StandardForm& form, int cutoff);

/// Two-mode squeezed vacuum sqrt(1 - l^2) sum_n l^n |n, n>, l = tanh r >= 0 (docs/physics.md §1.2):
/// rho_{(n,n),(n',n')} = (1 - l^2) l^{n + n'}; ledger = l^{2(N+1)} (closed form).
SectorState sector_tmsv(double r, int cutoff);
DenseState dense_tmsv(double r, int cutoff);

/// 1 - Tr(rho truncated at N) for the Gaussian state, without building it:
/// P(n_a > N) + P(n_a <= N, n_b > N), the first a thermal tail ((a-1)/(a+1))^{N+1}, the second
/// read off the generating function G(y, z) of docs/physics.md §3.2 as a power series with
/// non-negative coefficients only (so it keeps its relative accuracy for tiny deficits).
/// Cost O(N^2 log N).
double gaussian_trace_deficit(const gaussian::StandardForm& form, int cutoff);

// ---------------------------------------------------------------- cutoff control

/// Memory of one state at cutoff N, bytes: sector 8 sum_d (N+1-|d|)^2, dense 8 (N+1)^4.
/// (Applying an operation needs a second buffer of the same size; see Workspace.)
double memory_bytes_for(Engine engine, int cutoff);

/// The cutoff a state needs does not fit in the memory allowed.
class CutoffError : public std::runtime_error {
public:
  CutoffError(int needed_cutoff, double memory_bytes, double limit_bytes);
  int needed_cutoff() const { return needed_cutoff_; }
  double memory_bytes() const { return memory_bytes_; }
  double limit_bytes() const { return limit_bytes_; }

private:
  int needed_cutoff_;
  double memory_bytes_;
  double limit_bytes_;
};

/// Smallest N with gaussian_trace_deficit(form, N) < tolerance (docs/physics.md §3.5), found by
/// bisection between the marginal bounds max(q_A, q_B)^{N+1} <= deficit <= q_A^{N+1} + q_B^{N+1}.
/// Throws CutoffError naming that N and its memory when memory_bytes_for(engine, N) exceeds
/// max_memory_bytes (for hopeless states, needing N > 4096, the lower bound is named at once
/// instead), and std::invalid_argument unless 0 < tolerance < 1.
int auto_cutoff_gaussian(const gaussian::StandardForm& form, double tolerance, Engine engine,
                         double max_memory_bytes);

// ---------------------------------------------------------------- operations

/// Kraus operators of the pure-loss channel of transmissivity tau in [0, 1] (docs/physics.md §3.3):
/// A_k |n> = sqrt(C(n,k) tau^{n-k} (1-tau)^k) |n-k>, k = 0..N, shift -k (0^0 = 1). Complete on
/// n <= N: sum_k A_k^T A_k = I. Operators that vanish identically (tau = 1: k >= 1) are left out.
/// Coefficients here and in amplifier() are evaluated in log space (lgamma): no factorial or
/// binomial overflows at N = 150 and beyond.
Operation pure_loss(double tau, int cutoff);

/// Kraus operators of the quantum-limited amplifier of gain G >= 1 (docs/physics.md §3.3):
/// B_k |n> = sqrt(C(n+k,k) G^{-(n+1)} (1-1/G)^k) |n+k>, k = 0..N. The operators k > N send every
/// input above the cutoff; they are lumped into one last operator of shift N+1 whose coefficient
/// is sqrt(sum_{k>N} |B_k(n)|^2) (a negative-binomial tail, regularised incomplete beta
/// I_{1-1/G}(N+1, n+1)), so that the ledger records exactly the weight lost and the list stays
/// complete: sum_k K_k^T K_k = I on n <= N.
Operation amplifier(double gain, int cutoff);

/// Scratch memory for apply() in hot loops: an output buffer of each engine, sized on first use
/// (and again only when the cutoff changes). One per thread.
class Workspace {
public:
  Workspace() = default;
  SectorState& sector_buffer(int cutoff);
  DenseState& dense_buffer(int cutoff);
  /// A vector of N + 1 entries (the photon distribution of the acted-on mode).
  Eigen::VectorXd& distribution_buffer(int cutoff);

private:
  SectorState sector_{0};
  DenseState dense_{0};
  Eigen::VectorXd distribution_;
};

/// rho -> sum_k K_k rho K_k^T with K acting on `mode`. Elements mapped above the cutoff are
/// dropped and the diagonal weight sent there, sum_k sum_{n + shift_k > N} coeff_k[n]^2 p_n
/// (p the photon distribution of that mode), is added to the ledger. Coefficients beyond
/// coeff.size() count as 0; coefficients of inputs that a lowering operator would send below
/// |0> must be 0. Sector engine: block d -> d + shift (mode A) or d - shift (mode B), one
/// diagonal scaling per block, O(N^3) per Kraus operator, no allocation with a Workspace.
void apply(SectorState& state, Mode mode, const Operation& op, Workspace& work);
void apply(DenseState& state, Mode mode, const Operation& op, Workspace& work);
void apply(SectorState& state, Mode mode, const Operation& op);
void apply(DenseState& state, Mode mode, const Operation& op);

/// The thermal-loss channel (tau, n_E) on one mode: pure loss of transmissivity tau/G followed by
/// the amplifier of gain G = 1 + (1 - tau) n_E (docs/physics.md §3.3 and §10 item 5; Ivan, Sabapathy
/// & Simon, PRA 84, 042311 (2011)). The bath never enters the Fock space, so n_E ~ 1250 costs
/// nothing extra. std::invalid_argument unless 0 <= tau <= 1 and n_E >= 0.
void apply_channel(SectorState& state, Mode mode, const link::Channel& channel, Workspace& work);
void apply_channel(DenseState& state, Mode mode, const link::Channel& channel, Workspace& work);
void apply_channel(SectorState& state, Mode mode, const link::Channel& channel);
void apply_channel(DenseState& state, Mode mode, const link::Channel& channel);

}  // namespace heraldry::fock
