// Figures of merit of a two-mode state in the truncated Fock space: negativity, log-negativity
// and the Braunstein-Kimble unit-gain teleportation fidelity for coherent inputs.
// Every measure is taken on the normalised state rho / Tr rho, so heralded (unnormalised)
// states are accepted as they are; the relative truncation error of the input is
// truncation_loss() / trace() (see heraldry/fock.hpp). A state with Tr rho <= 0 is refused
// (std::invalid_argument).
#pragma once

#include <memory>
#include <vector>

#include <Eigen/Core>

#include "heraldry/fock.hpp"

namespace heraldry::measures {

/// Negativity N = (||rho^{T_B}||_1 - 1) / 2 and log-negativity E_N = log2 ||rho^{T_B}||_1
/// (Vidal & Werner, PRA 65, 032314 (2002)). Round-off that would give ||.||_1 < 1 is clamped, so
/// both are >= 0.
struct Entanglement {
  double negativity = 0.0;
  double log_negativity = 0.0;
};

/// Scratch memory for the measures in hot loops: the partial-transpose blocks and their
/// eigen-solvers, the EPR operator of the cutoff, the Gauss-Laguerre rule and the displacement
/// table. Each part is sized on first use for a cutoff and reused (no allocation per call)
/// until a state of another cutoff comes. One per thread; not copyable.
class Workspace {
public:
  Workspace();
  ~Workspace();
  Workspace(Workspace&&) noexcept;
  Workspace& operator=(Workspace&&) noexcept;
  Workspace(const Workspace&) = delete;
  Workspace& operator=(const Workspace&) = delete;

  struct Impl;
  Impl& impl() { return *impl_; }

private:
  std::unique_ptr<Impl> impl_;
};

/// Sector engine: rho^{T_B} is block diagonal in s = n_a + n_b of its row index (docs/physics.md §3.4);
/// each block (size <= N+1) is filled from the d-blocks and diagonalised (eigenvalues only,
/// Eigen::SelfAdjointEigenSolver). Cost ~ N^4 / 2 flops. Dense engine: the full partial
/// transpose and one eigen-solve of size (N+1)^2.
Entanglement entanglement(const fock::SectorState& state, Workspace& work);
Entanglement entanglement(const fock::DenseState& state, Workspace& work);
Entanglement entanglement(const fock::SectorState& state);
Entanglement entanglement(const fock::DenseState& state);

/// Unit-gain Braunstein-Kimble fidelity for coherent inputs (Braunstein & Kimble, PRL 80, 869
/// (1998)), Alice holding mode A, Bob mode B, resource with c >= 0 convention (docs/physics.md §7.1):
/// F = (1/pi) int d^2xi e^{-|xi|^2} chi_AB(xi*, xi) (Alice's mode gets xi*, Bob's xi).
///
/// EPR-operator route (the default): F = Tr[rho O], O = exp[-(a^dag - b)(a - b^dag)], whose
/// elements (docs/physics.md §7.2) are sums of positive terms, evaluated in log space. O depends only
/// on the cutoff; with a Workspace it is built once. Cost O(N^3) per state after that.
double fidelity_epr(const fock::SectorState& state, Workspace& work);
double fidelity_epr(const fock::DenseState& state, Workspace& work);
double fidelity_epr(const fock::SectorState& state);
double fidelity_epr(const fock::DenseState& state);

/// Radial route (docs/physics.md §7.3): for a U(1)-symmetric rho, chi_AB(xi*, xi) depends on u = |xi|^2
/// only, and F = int_0^inf du e^{-u} chi(u) = (1/2) sum_i w_i e^{x_i/2} chi(x_i/2) with the
/// Gauss-Laguerre rule of N+2 nodes (weight e^{-x}). chi(u) e^{u} is a polynomial of degree
/// <= 2N in u, so the rule is exact. The displacement elements come from the normalised
/// recurrence of displacement_elements (values bounded by 1) and the weights are carried as
/// w_i e^{x_i}: nothing overflows at N = 150. Cost O(N^4).
double fidelity_radial(const fock::SectorState& state, Workspace& work);
double fidelity_radial(const fock::DenseState& state, Workspace& work);
double fidelity_radial(const fock::SectorState& state);
double fidelity_radial(const fock::DenseState& state);

/// The default fidelity: the EPR route.
double fidelity(const fock::SectorState& state, Workspace& work);
double fidelity(const fock::DenseState& state, Workspace& work);
double fidelity(const fock::SectorState& state);
double fidelity(const fock::DenseState& state);

// ---------------------------------------------------------------- building blocks (public, tested)

/// <m, n| O |m', n'> of the EPR operator O = (1/pi) int d^2xi e^{-|xi|^2} D_A(xi*) (x) D_B(xi)
/// (docs/physics.md §7.2): 0 unless m - n = m' - n', otherwise
/// 2^{-(m'+n+1)} sqrt(m! n! m'! n'!) sum_p 1 / [(m-p)! (m'-p)! p! (n-m+p)!].
double epr_operator_element(int m, int n, int mp, int np);

/// Displacement matrix elements out(m, n) = <m| D(alpha) |n>, alpha real, m, n = 0..N with
/// N + 1 = out.rows() = out.cols() (Cahill & Glauber, Phys. Rev. 177, 1857 (1969):
/// <n+k|D|n> = sqrt(n!/(n+k)!) alpha^k e^{-alpha^2/2} L_n^(k)(alpha^2), <n|D|n+k> = (-1)^k <n+k|D|n>),
/// by the three-term recurrence of L_n^(k) in n carried on the normalised elements themselves
/// (all bounded by 1; no factorial or power overflows). Valid for alpha^2 < ~1400 (e^{-alpha^2/2}
/// representable).
void displacement_elements(double alpha, Eigen::Ref<Eigen::MatrixXd> out);

/// Gauss-Laguerre rule with n nodes for int_0^inf e^{-x} f(x) dx, built here (Boost 1.74 has
/// none): nodes from the eigenvalues of the Jacobi matrix (Golub & Welsch, Math. Comp. 23, 221
/// (1969)), polished by Newton steps on L_n; weights from w_i = 1 / (x_i L_n'(x_i)^2)
/// (Abramowitz & Stegun 25.4.45), stored scaled as w_i e^{x_i} and evaluated with the
/// e^{-x/2}-scaled Laguerre recurrence so that nothing overflows. Exact to round-off for
/// n <= ~350; nodes beyond x ~ 1400 (larger rules) get weight 0 (their true weight is < e^{-1400}).
struct LaguerreRule {
  std::vector<double> nodes;
  std::vector<double> scaled_weights;  // w_i e^{x_i}
};
LaguerreRule gauss_laguerre(int n);

}  // namespace heraldry::measures
