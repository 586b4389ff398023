// The exact paths that need no Fock cutoff (docs/physics.md §14): Gaussian protocols on the
// covariance matrix; separable inputs and entanglement-breaking links, where N = E_N = 0 is a
// theorem and only the success probability (and the fidelity) remain to compute; threshold
// heralding as a signed sum of Gaussian operators.
#include "point/exact.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <vector>

#include <Eigen/Dense>

#include "heraldry/gaussian.hpp"

namespace heraldry::point::detail {

using steps::StepSpec;
using steps::Weighting;

namespace {

// Round-off allowed on the PPT test: the symplectic eigenvalue of a state on the separability
// boundary is 1 to ~1e-15 relative.
constexpr double ppt_slack = 1e-13;
// The photon-number depth: the weight beyond it, summed over both modes, is below this.
constexpr double depth_tail = 1e-18;
// Work bound of the photon-number path (terms of the double sum): beyond it the point goes to
// the Fock engine, whose own bounds apply.
constexpr double max_terms = 4e9;
constexpr long long max_depth = 50'000'000;

using Cov = Eigen::Matrix4d;

int index_of(Mode m) { return m == Mode::A ? 0 : 1; }

// The thermal-loss channel on one mode of a general CM (vacuum variance 1).
void apply_channel(Cov& v, int mode, const link::Channel& ch) {
  const int o = 2 * mode;
  const double st = std::sqrt(ch.transmissivity);
  v.middleRows(o, 2) *= st;
  v.middleCols(o, 2) *= st;
  v.block(o, o, 2, 2) += (1.0 - ch.transmissivity) * (2.0 * ch.bath_photons + 1.0) * Eigen::Matrix2d::Identity();
}

struct Term {
  double weight;
  Cov v;
};

// One heralded step with a Gaussian dilation on every term. A reading of the ancilla by a
// threshold counter of efficiency eta and dark probability d has the effect
//   click:    1 - (1-d) (1-eta)^n      no click: (1-d) (1-eta)^n,
// and t^{2n} (t^2 = 1 - eta) is a Gaussian operator: its action on a Gaussian state gives a
// Gaussian state times a weight (the filter below). Genuine clicks drop the part in which the
// counter received no photon, d |0><0| (t = 0).
std::vector<Term> herald(const std::vector<Term>& in, int mode, const steps::GaussianDilation& dil,
                         const steps::CounterModel& counter, Weighting weighting) {
  const double d = counter.dark, eta = counter.efficiency;
  std::vector<std::pair<double, double>> parts;  // (coefficient, t^2)
  if (dil.reading == 1) {
    parts = {{1.0, 1.0}, {-(1.0 - d), 1.0 - eta}};
    if (weighting == Weighting::genuine && d > 0.0) parts.push_back({-d, 0.0});
  } else {
    parts = {{1.0 - d, 1.0 - eta}};
  }
  // Mode order in the 6x6 CM: A, B, ancilla.
  Eigen::Matrix<double, 6, 6> s = Eigen::Matrix<double, 6, 6>::Identity();
  const int o = 2 * mode;
  s.block(o, o, 2, 2) = dil.symplectic.topLeftCorner<2, 2>();
  s.block(o, 4, 2, 2) = dil.symplectic.topRightCorner<2, 2>();
  s.block(4, o, 2, 2) = dil.symplectic.bottomLeftCorner<2, 2>();
  s.block(4, 4, 2, 2) = dil.symplectic.bottomRightCorner<2, 2>();
  std::vector<Term> out;
  for (const Term& t : in) {
    Eigen::Matrix<double, 6, 6> v6 = Eigen::Matrix<double, 6, 6>::Identity();
    v6.topLeftCorner<4, 4>() = t.v;
    v6 = (s * v6 * s.transpose()).eval();
    const Eigen::Matrix<double, 6, 6> q = v6 + Eigen::Matrix<double, 6, 6>::Identity();  // Husimi CM
    const Eigen::Matrix<double, 6, 6> q_inv = q.inverse();
    const double det_q = q.determinant();
    for (const auto& [coef, t2] : parts) {
      if (coef == 0.0) continue;
      if (t2 == 1.0) {  // no filter: the ancilla traced out
        out.push_back({t.weight * coef, v6.topLeftCorner<4, 4>()});
        continue;
      }
      // <alpha| t^n rho t^n |alpha> = e^{-(1-t^2)|alpha_c|^2} <t alpha|rho|t alpha> on the
      // ancilla: the Husimi function stays Gaussian with inverse CM M below; weight
      // Tr[t^n rho t^n] = 1 / sqrt(det M det Q), state CM M^{-1} - I.
      Eigen::Matrix<double, 6, 6> scale = Eigen::Matrix<double, 6, 6>::Identity();
      const double tt = std::sqrt(std::max(0.0, t2));
      scale(4, 4) = scale(5, 5) = tt;
      Eigen::Matrix<double, 6, 6> m = scale * q_inv * scale;
      m(4, 4) += 0.5 * (1.0 - t2);
      m(5, 5) += 0.5 * (1.0 - t2);
      const double weight = 1.0 / std::sqrt(m.determinant() * det_q);
      const Eigen::Matrix<double, 6, 6> v_out = m.inverse() - Eigen::Matrix<double, 6, 6>::Identity();
      out.push_back({t.weight * coef * weight, v_out.topLeftCorner<4, 4>()});
    }
  }
  return out;
}

// The weight of a thermal (geometric) photon-number law beyond depth N: (n/(n+1))^{N+1}.
double geometric_tail(double mean, long long depth) {
  if (mean <= 0.0) return 0.0;
  return std::exp((depth + 1.0) * std::log(mean / (mean + 1.0)));
}

long long depth_for(double mean, double tail) {
  if (mean <= 0.0) return 0;
  const double q = std::log(mean / (mean + 1.0));  // < 0
  return static_cast<long long>(std::ceil(std::log(tail) / q));
}

}  // namespace

void poll(const Numerics& numerics) {
  if (numerics.cancel != nullptr && numerics.cancel->load(std::memory_order_relaxed)) throw Cancelled();
  poll_cancel();
}

PointResult covariance_figures(const gaussian::StandardForm& form) {
  PointResult r;
  r.method = Method::covariance;
  r.status = Status::ok;
  r.success_probability = 1.0;
  r.negativity = gaussian::negativity(form);
  r.log_negativity = gaussian::log_negativity(form);
  r.fidelity = gaussian::fidelity(form);
  return r;
}

bool separable(const gaussian::StandardForm& form) {
  return gaussian::smallest_pt_symplectic(form) >= 1.0 - ppt_slack;
}

bool entanglement_breaking(const link::Channel& ch) {
  return (1.0 - ch.transmissivity) * ch.bath_photons >= ch.transmissivity;
}

bool breaks_entanglement(const PointSpec& spec, std::size_t first) {
  for (std::size_t i = first; i < spec.steps.size(); ++i) {
    const StepSpec& s = spec.steps[i];
    if (!s.type->channels) continue;
    const steps::Channels ch = s.type->channels(s, step_context(spec, s, Weighting::full, nullptr));
    if ((ch.a && entanglement_breaking(*ch.a)) || (ch.b && entanglement_breaking(*ch.b))) return true;
  }
  return false;
}

std::optional<SumFigures> gaussian_sum(const PointSpec& spec, const gaussian::StandardForm& form, std::size_t first) {
  for (std::size_t i = first; i < spec.steps.size(); ++i) {
    const StepSpec& s = spec.steps[i];
    if (s.type->channels) continue;
    if (!s.type->dilation || !s.type->dilation(s, spec.counters[static_cast<std::size_t>(s.counter)])) return std::nullopt;
  }
  bool dark = false;
  for (std::size_t i = first; i < spec.steps.size(); ++i)
    if (spec.steps[i].type->uses_counter && spec.counters[static_cast<std::size_t>(spec.steps[i].counter)].dark > 0.0)
      dark = true;
  auto run = [&](Weighting weighting, double& fidelity) {
    std::vector<Term> terms{{1.0, gaussian::covariance(form)}};
    for (std::size_t i = first; i < spec.steps.size(); ++i) {
      poll(spec.numerics);
      const StepSpec& s = spec.steps[i];
      if (s.type->channels) {
        const steps::Channels ch = s.type->channels(s, step_context(spec, s, Weighting::full, nullptr));
        for (Term& t : terms) {
          if (ch.a) apply_channel(t.v, 0, *ch.a);
          if (ch.b) apply_channel(t.v, 1, *ch.b);
        }
        continue;
      }
      const steps::CounterModel& counter = spec.counters[static_cast<std::size_t>(s.counter)];
      terms = herald(terms, index_of(s.mode), *s.type->dilation(s, counter), counter, weighting);
    }
    double p = 0.0, f = 0.0;
    for (const Term& t : terms) {
      p += t.weight;
      f += t.weight * gaussian::fidelity(t.v);
    }
    fidelity = p > 0.0 ? f / p : 0.0;
    return p;
  };
  SumFigures out;
  out.probability = run(Weighting::full, out.fidelity);
  double unused = 0.0;
  out.genuine_probability = dark ? run(Weighting::genuine, unused) : out.probability;
  return out;
}

std::vector<double> photon_numbers(const gaussian::StandardForm& form, int na, int nb) {
  // Normally ordered moments A = <a^dagger a>, B = <b^dagger b>, C = <a b> of the standard form
  // (vacuum variance 1); the generating function E[z^na w^nb] is
  // 1 / [(1 + A u)(1 + B v) - C^2 u v], u = 1 - z, v = 1 - w (docs/physics.md §14.1), i.e.
  // 1 / (a0 - a1 z - a2 w + a3 z w), whose coefficients obey the recurrence below. Summed in
  // long double: for separable states a3 >= 0 and the recurrence subtracts.
  const long double A = 0.5L * (form.a - 1.0), B = 0.5L * (form.b - 1.0), C = 0.5L * form.c;
  const long double a0 = (1 + A) * (1 + B) - C * C, a1 = A * (1 + B) - C * C, a2 = B * (1 + A) - C * C,
                    a3 = A * B - C * C;
  std::vector<long double> prev(static_cast<std::size_t>(nb + 1)), cur(prev.size());
  std::vector<double> out(static_cast<std::size_t>((na + 1) * (nb + 1)));
  for (int n = 0; n <= na; ++n) {
    for (int m = 0; m <= nb; ++m) {
      long double v = (n == 0 && m == 0) ? 1.0L : 0.0L;
      if (n > 0) v += a1 * prev[m];
      if (m > 0) v += a2 * cur[m - 1];
      if (n > 0 && m > 0) v -= a3 * prev[m - 1];
      cur[m] = v / a0;
      out[static_cast<std::size_t>(n * (nb + 1) + m)] = static_cast<double>(cur[m]);
    }
    std::swap(prev, cur);
  }
  return out;
}

std::optional<NumberFigures> photon_number(const PointSpec& spec, const gaussian::StandardForm& form,
                                           std::size_t first) {
  std::array<const StepSpec*, 2> on{nullptr, nullptr};
  for (std::size_t i = first; i < spec.steps.size(); ++i) {
    const StepSpec& s = spec.steps[i];
    if (!s.type->effect) return std::nullopt;  // a channel after a herald, or a kind without an effect
    const int k = index_of(s.mode);
    if (on[k] != nullptr) return std::nullopt;  // two heralded steps on one mode: composition not closed
    on[k] = &s;
  }
  const std::array<double, 2> mean{0.5 * (form.a - 1.0), 0.5 * (form.b - 1.0)};
  std::array<long long, 2> depth{0, 0};
  double tail = 0.0;
  for (int k = 0; k < 2; ++k) {
    if (!on[k]) continue;
    depth[k] = depth_for(mean[k], 0.5 * depth_tail);
    if (depth[k] > max_depth) return std::nullopt;
    tail += geometric_tail(mean[k], depth[k]);
  }
  if (on[0] && on[1] && static_cast<double>(depth[0] + 1) * static_cast<double>(depth[1] + 1) > max_terms)
    return std::nullopt;

  bool dark = false;
  for (const StepSpec* s : on)
    if (s && s->type->uses_counter && spec.counters[static_cast<std::size_t>(s->counter)].dark > 0.0) dark = true;

  NumberFigures out;
  out.tail = tail;
  // The amplifier's cut: the input weight above its N (its mode's thermal marginal).
  for (int k = 0; k < 2; ++k)
    if (on[k] && on[k]->type->name == "amplify")
      out.amplifier_cut_fraction = std::max(out.amplifier_cut_fraction,
                                            geometric_tail(mean[k], static_cast<long long>(on[k]->value("max_photons"))));

  auto probability = [&](Weighting weighting) {
    std::array<std::vector<double>, 2> e;
    for (int k = 0; k < 2; ++k) {
      poll(spec.numerics);
      if (on[k]) e[k] = on[k]->type->effect(*on[k], step_context(spec, *on[k], weighting, nullptr), static_cast<int>(depth[k]));
    }
    // Each effect tends to a limit L (1 for a click, 0 for silence or exact counts) and differs
    // from it by more than 1e-20 only up to some depth K: with e = L + delta,
    //   P = L_A L_B + L_A sum_m delta_B p_B + L_B sum_n delta_A p_A + sum_{n<K_A, m<K_B} delta_A delta_B p,
    // so the double sum runs over K_A x K_B terms only (the marginals p_A, p_B are thermal).
    auto marginal = [&](int k, const std::vector<double>& x) {  // sum_n x(n) m^n / (m + 1)^{n+1}
      const long double m = mean[k], ratio = m / (m + 1);
      long double p = 1 / (m + 1), sum = 0;
      for (std::size_t n = 0; n < x.size(); ++n, p *= ratio) sum += p * x[n];
      return sum;
    };
    if (!on[0] || !on[1]) return static_cast<double>(marginal(on[0] ? 0 : 1, e[on[0] ? 0 : 1]));
    std::array<long double, 2> limit{}, single{};
    std::array<std::vector<double>, 2> delta;
    for (int k = 0; k < 2; ++k) {
      limit[k] = e[k].back();
      std::size_t top = e[k].size();
      while (top > 0 && std::abs(e[k][top - 1] - static_cast<double>(limit[k])) <= 1e-20) --top;
      delta[k].resize(top);
      for (std::size_t n = 0; n < top; ++n) delta[k][n] = e[k][n] - static_cast<double>(limit[k]);
      single[k] = marginal(k, delta[k]);
    }
    // The double sum, row by row (the recurrence of photon_numbers, never stored whole).
    const long double A = 0.5L * (form.a - 1.0), B = 0.5L * (form.b - 1.0), C = 0.5L * form.c;
    const long double a0 = (1 + A) * (1 + B) - C * C, a1 = A * (1 + B) - C * C, a2 = B * (1 + A) - C * C,
                      a3 = A * B - C * C;
    const std::size_t nb = delta[1].size();
    std::vector<long double> prev(nb, 0.0L), cur(nb, 0.0L);
    long double both = 0;
    for (std::size_t n = 0; n < delta[0].size(); ++n) {
      if ((n & 63) == 0) poll(spec.numerics);
      long double row = 0;
      for (std::size_t m = 0; m < nb; ++m) {
        long double v = (n == 0 && m == 0) ? 1.0L : 0.0L;
        if (n > 0) v += a1 * prev[m];
        if (m > 0) v += a2 * cur[m - 1];
        if (n > 0 && m > 0) v -= a3 * prev[m - 1];
        cur[m] = v / a0;
        row += cur[m] * delta[1][m];
      }
      both += row * delta[0][n];
      std::swap(prev, cur);
    }
    return static_cast<double>(limit[0] * limit[1] + limit[0] * single[1] + limit[1] * single[0] + both);
  };
  out.probability = probability(Weighting::full);
  out.genuine_probability = dark ? probability(Weighting::genuine) : out.probability;
  return out;
}

}  // namespace heraldry::point::detail
