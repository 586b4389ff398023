// Step `scissors`: single-photon quantum scissors (Pegg, Phillips & Barnett, PRL 81, 1604
// (1998)) as a noiseless amplifier (Ralph & Lund, AIP Conf. Proc. 1110, 155 (2009)), with real
// counters and an imperfect single-photon source.
//
// Network and convention. The ancilla photon (creation operator c^dagger) meets vacuum on a
// beam splitter of reflectivity kappa = g^2 / (1 + g^2):
//     c^dagger -> sqrt(kappa) o^dagger + sqrt(1 - kappa) e^dagger,
// o the output mode (it replaces the input mode), e the arm towards the second beam splitter.
// There the input mode a meets e on a 50:50 beam splitter watched by counters 1 and 2:
//     a^dagger -> (d1^dagger + d2^dagger) / sqrt(2),   e^dagger -> (d1^dagger - d2^dagger) / sqrt(2).
// Expanding (a^dagger)^n / sqrt(n!) times the ancilla gives the amplitude of k1, k2 photons at
// the counters (J = k1 + k2) and m photons in the output:
//   photon ancilla, input n = J - 1, m = 0:  sqrt(1-kappa) 2^{-J/2} (k1 - k2) sqrt(C(J,k1) / J)
//   photon ancilla, input n = J,     m = 1:  sqrt(kappa) 2^{-J/2} sqrt(C(J,k1))
//   vacuum ancilla, input n = J,     m = 0:  2^{-J/2} sqrt(C(J,k1))
// (the first from (d1+d2)^n (d1-d2) whose d1^{k1} d2^{k2} coefficient is
// n! (k1 - k2) / (k1! k2!)). With ideal number-resolving counters the herald (1,0) gives
// T_+ = sqrt((1-kappa)/2)(|0><0| + g|1><1|) and (0,1) gives -T_-: the pi phase |1> -> -|1> on
// the output of the (0,1) herald makes both T_+ (docs/physics.md §5.2).
// Counters see photon numbers, so for each herald the map is a sum over (k1, k2) of rank-one
// terms weighted by w1(k1) w2(k2); each is a shift operator of shift m - n, merged per shift.
#include <cmath>

#include "steps/detail.hpp"

namespace heraldry::steps {

fock::Operation scissors_operation(double gain, double source_efficiency,
                                   const CounterModel& counter, int cutoff, Weighting weighting,
                                   bool phase_correction) {
  const double g = gain;
  if (!(g > 0.0) || !std::isfinite(g)) detail::fail("scissors.gain", g, "a gain > 0");
  const double ps = source_efficiency;
  if (!(ps >= 0.0 && ps <= 1.0))
    detail::fail("scissors.photon_source_efficiency", ps, "a probability in [0, 1]");
  validate(counter, "scissors.counter");
  const double kappa = g * g / (1.0 + g * g);
  const double one_minus_kappa = 1.0 / (1.0 + g * g);

  // Herald: exactly one counter fires (threshold: click / no click; resolving: 1 / 0 counts).
  const int max_j = cutoff + 1;
  const std::vector<double> fire = reading_weights(counter, 1, max_j, weighting);
  const std::vector<double> silent = reading_weights(counter, 0, max_j, weighting);

  std::vector<fock::ShiftOperator> raw;
  for (int outcome = 0; outcome < 2; ++outcome) {
    const double sign = (outcome == 1 && phase_correction) ? -1.0 : 1.0;
    for (int j = 0; j <= max_j; ++j) {
      const double scale = std::pow(2.0, -0.5 * j);
      for (int k1 = 0; k1 <= j; ++k1) {
        const int k2 = j - k1;
        const double w = outcome == 0 ? fire[k1] * silent[k2] : silent[k1] * fire[k2];
        if (w == 0.0) continue;
        const double root_c = std::sqrt(detail::binomial(j, k1));
        if (ps > 0.0) {
          fock::ShiftOperator k{1 - j, std::vector<double>(cutoff + 1, 0.0)};
          const double amp = std::sqrt(ps * w) * scale;
          if (j >= 1 && j - 1 <= cutoff)
            k.coeff[j - 1] = amp * std::sqrt(one_minus_kappa) * (k1 - k2) * root_c / std::sqrt(double(j));
          if (j <= cutoff) k.coeff[j] = sign * amp * std::sqrt(kappa) * root_c;
          raw.push_back(std::move(k));
        }
        if (ps < 1.0 && j <= cutoff) {
          fock::ShiftOperator k{-j, std::vector<double>(cutoff + 1, 0.0)};
          k.coeff[j] = std::sqrt((1.0 - ps) * w) * scale * root_c;
          raw.push_back(std::move(k));
        }
      }
    }
  }
  return detail::merge_by_shift(raw);
}

}  // namespace heraldry::steps

namespace heraldry::steps {

namespace {

const ParamSchema scissors_params[] = {
    {"gain", "1", "amplitude gain g = sqrt(kappa / (1 - kappa)) of the first beam splitter", ParamSchema::Type::number,
     {0.0, unbounded, true, false}, std::nullopt},
    {"photon_source_efficiency", "1", "probability that the ancilla photon is there", ParamSchema::Type::number,
     {0.0, 1.0, false, false}, 1.0},
};

template <class State>
void apply(State& state, const StepSpec& step, StepContext& context) {
  fock::apply(state, step.mode,
              scissors_operation(step.values[0], step.values[1], detail::counter_of(step, context), state.cutoff(),
                                 context.weighting),
              detail::work_of(context));
}

// P(herald | n photons), from the amplitudes above summed in modulus squared: with J photons at
// the counters split (k1, k2), W = fire(k1) silent(k2) + silent(k1) fire(k2) (both heralds),
//   e(n) = ps (1-kappa) A(n+1) + (ps kappa + 1 - ps) B(n),
//   B(J) = 2^{-J} sum_k1 C(J,k1) W,   A(J) = 2^{-J} sum_k1 C(J,k1) (k1-k2)^2 / J W.
// A silent counter's weight decays with its photons, so for large J only k1 or k2 <= K matter.
std::vector<double> effect(const StepSpec& step, const StepContext& context, int max_photons) {
  const CounterModel& counter = detail::counter_of(step, context);
  const double g = step.values[0], ps = step.values[1];
  const double kappa = g * g / (1.0 + g * g);
  const int top = max_photons + 1;
  const detail::ReadingTail silent = detail::reading_tail(counter, 0, context.weighting, top);
  const detail::ReadingTail fire = detail::reading_tail(counter, 1, context.weighting, top);
  const int kk = static_cast<int>(silent.w.size()) - 1;
  std::vector<double> log_c(static_cast<std::size_t>(kk + 1));
  auto sums = [&](int j, double& b, double& a) {
    b = a = 0.0;
    if (j == 0) {
      b = 2.0 * fire.at(0) * silent.at(0);
      return;
    }
    const double log_half = -j * std::log(2.0);
    auto term = [&](int k1, double log_binom) {
      const int k2 = j - k1;
      const double w = fire.at(k1) * silent.at(k2) + silent.at(k1) * fire.at(k2);
      if (w == 0.0) return;
      const double c = std::exp(log_binom + log_half) * w;
      b += c;
      a += c * double(k1 - k2) * double(k1 - k2) / j;
    };
    if (j <= 2 * kk + 1) {
      double lb = 0.0;
      for (int k1 = 0; k1 <= j; ++k1) {
        if (k1 > 0) lb += std::log(double(j - k1 + 1)) - std::log(double(k1));
        term(k1, lb);
      }
    } else {
      // log C(j, k) for k <= K by the recurrence; C(j, j - k) is the same number.
      double lb = 0.0;
      for (int k = 0; k <= kk; ++k) {
        if (k > 0) lb += std::log(double(j - k + 1)) - std::log(double(k));
        log_c[static_cast<std::size_t>(k)] = lb;
      }
      for (int k1 = 0; k1 <= kk; ++k1) term(k1, log_c[static_cast<std::size_t>(k1)]);
      for (int k1 = j - kk; k1 <= j; ++k1) term(k1, log_c[static_cast<std::size_t>(j - k1)]);
    }
  };
  std::vector<double> e(static_cast<std::size_t>(max_photons + 1));
  double b_next = 0.0, a_next = 0.0;
  sums(0, b_next, a_next);
  for (int n = 0; n <= max_photons; ++n) {
    const double b_n = b_next;
    sums(n + 1, b_next, a_next);
    e[n] = ps * (1.0 - kappa) * a_next + (ps * kappa + 1.0 - ps) * b_n;
    // Beyond 2K + 1 photons every term C(J, k) 2^{-J} (k <= K) falls with J: once the sums
    // underflow, the effect is 0 for every larger n.
    if (n + 1 > 2 * kk + 1 && b_n < 1e-300 && b_next < 1e-300 && a_next < 1e-300) break;
  }
  return e;
}

}  // namespace

extern const StepType scissors_step{
    .name = "scissors",
    .summary = "quantum scissors with a single-photon source and two counters (herald: exactly one fires)",
    .role = StepType::Role::herald,
    .params = scissors_params,
    .uses_counter = true,
    .check = nullptr,
    .channels = nullptr,
    .apply_sector = &apply<fock::SectorState>,
    .apply_dense = &apply<fock::DenseState>,
    .effect = &effect,
    .dilation = nullptr,
};

}  // namespace heraldry::steps
