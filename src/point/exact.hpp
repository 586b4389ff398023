// The evaluation paths that need no Fock cutoff (src/point/exact.cpp): the covariance-matrix
// figures of Gaussian protocols, separability and entanglement breaking, the Gaussian-sum path
// of threshold-counter heralding and the photon-number path of separable inputs. Internal to
// src/point.
#pragma once

#include <atomic>
#include <cstddef>
#include <optional>

#include "heraldry/point.hpp"

namespace heraldry::point::detail {

/// What a step reads besides its spec, at this point (src/point/evaluate.cpp).
steps::StepContext step_context(const PointSpec& spec, const steps::StepSpec& step, steps::Weighting weighting,
                                fock::Workspace* work);

/// The Gaussian prefix: the source through the leading channel steps (link, loss) on the
/// covariance matrix; `first` receives the index of the first step that is not Gaussian.
gaussian::StandardForm gaussian_prefix(const PointSpec& spec, std::size_t& first);

/// Throws Cancelled when the point's cancel flag is set.
void poll(const Numerics& numerics);

/// N, E_N and F of a Gaussian state; P = 1 (method covariance).
PointResult covariance_figures(const gaussian::StandardForm& form);

/// PPT on the covariance matrix (necessary and sufficient for two modes: Simon, PRL 84, 2726
/// (2000)): the smallest symplectic eigenvalue of the partial transpose is >= 1 (vacuum 1).
bool separable(const gaussian::StandardForm& form);

/// A thermal-loss channel breaks entanglement iff (1 - tau) n_E >= tau (Holevo, Probl. Inf.
/// Transm. 44, 171 (2008)).
bool entanglement_breaking(const link::Channel& channel);

/// Whether the steps from `first` on leave a separable state whatever enters them: some
/// channel step among them breaks entanglement on a mode (later local steps cannot restore it).
bool breaks_entanglement(const PointSpec& spec, std::size_t first);

/// Figures of the signed Gaussian sum: every step from `first` is a Gaussian channel or a
/// heralded step with a Gaussian dilation read by a threshold counter.
struct SumFigures {
  double probability = 0.0;
  double genuine_probability = 0.0;
  double fidelity = 0.0;
};
std::optional<SumFigures> gaussian_sum(const PointSpec& spec, const gaussian::StandardForm& form, std::size_t first);

/// The success probability from the joint photon-number distribution of the Gaussian state
/// `form`: every step from `first` is heralded with an effect, at most one per mode. `tail`
/// bounds the absolute error of P (the photon-number weight beyond the depth summed).
struct NumberFigures {
  double probability = 0.0;
  double genuine_probability = 0.0;
  double tail = 0.0;
  double amplifier_cut_fraction = 0.0;
};
std::optional<NumberFigures> photon_number(const PointSpec& spec, const gaussian::StandardForm& form,
                                           std::size_t first);

/// The joint photon-number generating function's recurrence (exposed for tests): p(n, m) of the
/// phase-symmetric two-mode Gaussian `form` for n <= na, m <= nb, row-major.
std::vector<double> photon_numbers(const gaussian::StandardForm& form, int na, int nb);

}  // namespace heraldry::point::detail
