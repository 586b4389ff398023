// Step `add`: heralded photon addition. A two-mode squeezer of parameter s couples the mode to
// a vacuum idler; a counter on the idler heralds (docs/physics.md §5.3).
#include <cmath>
#include <limits>

#include "steps/detail.hpp"

namespace heraldry::steps {

namespace {

// log of B_k[n]^2 = C(n+k,k) G^{-(n+1)} (1-1/G)^k with G = cosh^2 s, 1 - 1/G = tanh^2 s.
double log_amplifier_weight(int n, int k, double log_cosh, double log_tanh) {
  return detail::log_binomial(n + k, k) - 2.0 * (n + 1) * log_cosh + 2.0 * k * log_tanh;
}

}  // namespace

fock::Operation add_operation(double squeezing, const CounterModel& counter, int reading,
                              int cutoff, Weighting weighting) {
  const double s = squeezing;
  // Heralded addition is a weak-squeezing device; s <= 3 (gain cosh^2 s ~ 100) also keeps the
  // numerical tail sum below short.
  if (!(s >= 0.0 && s <= 3.0)) detail::fail("add.squeezing", s, "a squeezing parameter in [0, 3]");
  validate(counter, "add.counter");
  fock::Operation op;
  if (s == 0.0) {
    // No squeezing: the idler stays empty and the herald weight is that of zero photons.
    const double w0 = reading_probability(counter, reading, 0, weighting);
    if (w0 > 0.0) op.kraus.push_back({0, std::vector<double>(cutoff + 1, std::sqrt(w0))});
    return op;
  }
  const double log_cosh = std::log(std::cosh(s));
  const double log_tanh = std::log(std::tanh(s));
  // k idler photons, k = 0..N: B_k |n> = sqrt(C(n+k,k)) G^{-(n+1)/2} (1-1/G)^{k/2} |n+k>.
  for (int k = 0; k <= cutoff; ++k) {
    const double w = reading_probability(counter, reading, k, weighting);
    if (w == 0.0) continue;
    fock::ShiftOperator kraus{k, std::vector<double>(cutoff + 1, 0.0)};
    for (int n = 0; n <= cutoff; ++n)
      kraus.coeff[n] = std::sqrt(w * std::exp(log_amplifier_weight(n, k, log_cosh, log_tanh)));
    op.kraus.push_back(std::move(kraus));
  }
  // k >= N+1 idler photons push every input above the cutoff: one operator carries their
  // summed weight sum_{k>N} w(k) B_k[n]^2 into the engine's ledger. The unweighted series is
  // sum_k C(n+k,k) x^k (1-x)^{n+1} = 1 (x = tanh^2 s); its terms decrease once the ratio
  // x (n+k+1)/(k+1) < 1, after which the rest is bounded by a geometric series.
  const double x = std::exp(2.0 * log_tanh);
  fock::ShiftOperator tail{cutoff + 1, std::vector<double>(cutoff + 1, 0.0)};
  bool any = false;
  for (int n = 0; n <= cutoff; ++n) {
    double weighted = 0.0, plain = 0.0;
    for (int k = cutoff + 1; k < 10'000'000; ++k) {
      const double t = std::exp(log_amplifier_weight(n, k, log_cosh, log_tanh));
      plain += t;
      weighted += reading_probability(counter, reading, k, weighting) * t;
      const double ratio = x * (n + k + 1.0) / (k + 1.0);
      if (ratio < 1.0 && t * ratio / (1.0 - ratio) <= 1e-17 * plain) break;
      if (plain == 0.0 && ratio < 1.0) break;  // underflowed tail
    }
    tail.coeff[n] = std::sqrt(weighted);
    any = any || weighted > 0.0;
  }
  if (any) op.kraus.push_back(std::move(tail));
  return op;
}

}  // namespace heraldry::steps

namespace heraldry::steps {

namespace {

const ParamSchema add_params[] = {
    {"squeezing", "1", "squeezing parameter s of the adder's two-mode squeezer (gain cosh^2 s)",
     ParamSchema::Type::number, {0.0, 3.0, true, true}, std::nullopt},
};

// Heralded on a click of the idler's counter (one count for a resolving one).
constexpr int herald_reading = 1;

template <class State>
void apply(State& state, const StepSpec& step, StepContext& context) {
  fock::apply(state, step.mode,
              add_operation(step.values[0], detail::counter_of(step, context), herald_reading, state.cutoff(),
                            context.weighting),
              detail::work_of(context));
}

// P(herald | n photons): the idler holds k photons with the negative-binomial law of a
// quantum-limited amplifier of gain cosh^2 s acting on |n>.
std::vector<double> effect(const StepSpec& step, const StepContext& context, int max_photons) {
  const CounterModel& counter = detail::counter_of(step, context);
  const double th = std::tanh(step.values[0]);
  const detail::ReadingTail tail = detail::reading_tail(counter, herald_reading, context.weighting, 10'000'000);
  return detail::negative_binomial_mixture(tail, th * th, max_photons);
}

// The two-mode squeezer with the vacuum idler: x' = ch x + sh x_i, p' = ch p - sh p_i.
std::optional<GaussianDilation> dilation(const StepSpec& step, const CounterModel& counter) {
  if (counter.kind != CounterKind::threshold) return std::nullopt;
  const double ch = std::cosh(step.values[0]), sh = std::sinh(step.values[0]);
  const Eigen::Matrix2d z = Eigen::Vector2d(1.0, -1.0).asDiagonal();
  GaussianDilation d;
  d.symplectic.topLeftCorner<2, 2>() = ch * Eigen::Matrix2d::Identity();
  d.symplectic.topRightCorner<2, 2>() = sh * z;
  d.symplectic.bottomLeftCorner<2, 2>() = sh * z;
  d.symplectic.bottomRightCorner<2, 2>() = ch * Eigen::Matrix2d::Identity();
  d.reading = herald_reading;
  return d;
}

}  // namespace

extern const StepType add_step{
    .name = "add",
    .summary = "heralded photon addition: a weak two-mode squeezer with a vacuum idler, the idler counted",
    .role = StepType::Role::herald,
    .params = add_params,
    .uses_counter = true,
    .check = nullptr,
    .channels = nullptr,
    .apply_sector = &apply<fock::SectorState>,
    .apply_dense = &apply<fock::DenseState>,
    .effect = &effect,
    .dilation = &dilation,
};

}  // namespace heraldry::steps
