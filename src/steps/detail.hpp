// Internals shared by the step files: small combinatorics, the per-shift merge of Kraus
// operators, and the step registry types. Not part of the public API.
#pragma once

#include <string>
#include <vector>

#include "heraldry/steps.hpp"

namespace heraldry::steps::detail {

/// C(n, k) in double by the multiplicative formula (exact up to 2^53, then relative error
/// ~ k epsilon); 0 outside 0 <= k <= n.
double binomial(int n, int k);

/// log C(n, k) for large arguments (lgamma).
double log_binomial(int n, int k);

/// x^k with 0^0 = 1 (integer exponent).
double power(double x, int k);

/// Throws InputError(key, value, expected) with an empty file name: the caller (scenario layer)
/// has already located the step; here we name the step parameter.
[[noreturn]] void fail(const std::string& key, double value, const std::string& expected);
[[noreturn]] void fail(const std::string& key, const std::string& value, const std::string& expected);

/// Merges Kraus operators that share a shift: the map rho -> sum_i K_i rho K_i^T restricted to
/// one shift s depends only on the Gram matrix M[n][n'] = sum_i c_i[n] c_i[n'] (the output
/// element (n+s, n'+s) is M[n][n'] rho[n][n']), so any factorisation M = sum_j u_j u_j^T gives
/// the same map. A pivoted Cholesky factorisation keeps at most rank(M) operators. Exact up to
/// round-off; zero operators disappear.
fock::Operation merge_by_shift(const std::vector<fock::ShiftOperator>& kraus);

// ------------------------------------------------------------------ the step registry

/// What a step may read besides its own spec, and what it reports back.
struct StepContext {
  const PointSpec& point;             // channels and counters
  Weighting weighting = Weighting::full;
  fock::Workspace& work;
  double amplifier_cut_fraction = 0.0;  // largest over the amplify steps run so far
};

/// The counter a step names; InputError if the index is not one of the point's counters.
const CounterModel& counter_of(const StepSpec& step, const StepContext& context);

/// One function per step kind, for both engines (defined in the step's own file, explicitly
/// instantiated for fock::SectorState and fock::DenseState).
template <class State>
using StepFunction = void (*)(State&, const StepSpec&, StepContext&);

template <class State> void apply_link(State&, const StepSpec&, StepContext&);
template <class State> void apply_tap(State&, const StepSpec&, StepContext&);
template <class State> void apply_add(State&, const StepSpec&, StepContext&);
template <class State> void apply_amplify(State&, const StepSpec&, StepContext&);
template <class State> void apply_scissors(State&, const StepSpec&, StepContext&);
template <class State> void apply_loss(State&, const StepSpec&, StepContext&);

/// The registry: StepKind -> function. A new step kind is one file and one line here.
template <class State>
StepFunction<State> step_function(StepKind kind);

/// Applies one step through the registry.
template <class State>
void apply_step(State& state, const StepSpec& step, StepContext& context) {
  step_function<State>(step.kind)(state, step, context);
}

#define HERALDRY_STEPS_INSTANTIATE(name)                                                        \
  template void name<fock::SectorState>(fock::SectorState&, const StepSpec&, StepContext&);   \
  template void name<fock::DenseState>(fock::DenseState&, const StepSpec&, StepContext&);

}  // namespace heraldry::steps::detail
