// Hardware as it is: antenna losses (spillover, ohmic, mismatch) at their temperatures, different
// antennas at the two ends, a nondegenerate source, and the source as measured (squeezing and
// antisqueezing, or a covariance matrix). Each check names the source of its expected value.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "heraldry/common.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"

using namespace heraldry;
using namespace heraldry::link;

namespace {

constexpr double pi = 3.14159265358979323846;

void check_rel(double computed, double expected, double rel) {
  INFO("computed " << computed << ", expected " << expected << ", relative tolerance " << rel);
  CHECK(std::abs(computed - expected) <= rel * std::max(std::abs(computed), std::abs(expected)));
}

// An open-air model at 5.4 GHz with 15 C air, no gases (fixed 0 dB/km) unless asked: at d = 0
// the beam transmits 1 exactly (Goubau) and only the antenna stages are left.
LinkModel bare_air(double t_air = 288.15) {
  LinkModel m;
  m.frequency_hz = 5.4e9;
  m.air.model = AirModel::fixed;
  m.air.fixed_db_per_km = 0.0;
  m.air.temperature_k = t_air;
  m.antenna = Antenna{1.2, 0.7};
  return m;
}

void check_same(const ModeBudget& x, const ModeBudget& y) {
  CHECK(x.channel.transmissivity == y.channel.transmissivity);
  CHECK(x.channel.bath_photons == y.channel.bath_photons);
  CHECK(x.loss.beam_db == y.loss.beam_db);
  CHECK(x.loss.air_db == y.loss.air_db);
  CHECK(x.loss.rain_db == y.loss.rain_db);
  CHECK(x.loss.interface_db == y.loss.interface_db);
  CHECK(x.loss.line_db == y.loss.line_db);
  CHECK(x.loss.spillover_db == y.loss.spillover_db);
  CHECK(x.loss.ohmic_db == y.loss.ohmic_db);
  CHECK(x.loss.mismatch_db == y.loss.mismatch_db);
  CHECK(x.loss.total_db() == y.loss.total_db());
  CHECK(x.noise.total() == y.noise.total());
}

// A stage built by hand from the public pieces: transmissivity, bath and lost fraction.
struct HandStage {
  Channel channel;
  double lost;
  int cause;  // index into the cause list of the test below
};

gaussian::StandardForm one_way_state(const gaussian::StandardForm& s, const LinkBudget& b) {
  return gaussian::apply(gaussian::apply(s, Mode::A, b.a.channel), Mode::B, b.b.channel);
}

gaussian::Covariance grouped(const gaussian::Covariance& interleaved) {
  // (x_A, p_A, x_B, p_B) -> (x_A, x_B, p_A, p_B), written out entry by entry.
  const int to[4] = {0, 2, 1, 3};  // interleaved index i sits at grouped index to[i]
  gaussian::Covariance g;
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 4; ++j) g(to[i], to[j]) = interleaved(i, j);
  return g;
}

}  // namespace

// ------------------------------------------------------------------------- antenna stages

TEST_CASE("A spillover stage is a beam splitter whose thermal port holds the surroundings") {
  // Closed form: tau = 1 - x, n_E = planck(f, T_surroundings), default T = the air's; two
  // identical stages at one bath compose to tau^2 at the same bath (compose's closed form with
  // n1 = n2). Added photons: x n tau + x n (the first one attenuated by the second).
  LinkModel m = bare_air();
  m.antenna->spillover_loss = 0.02;
  const double n = planck_occupation(5.4e9, 288.15);
  const auto b = link_budget(m, 0.0).b;
  check_rel(b.channel.transmissivity, 0.98 * 0.98, 1e-15);
  check_rel(b.channel.bath_photons, n, 1e-13);
  check_rel(b.loss.spillover_db, -20.0 * std::log10(0.98), 1e-13);
  check_rel(b.loss.total_db(), -10.0 * std::log10(b.channel.transmissivity), 1e-12);
  check_rel(b.noise.spillover, 0.02 * n * 0.98 + 0.02 * n, 1e-13);
  check_rel(b.noise.total(), (1.0 - b.channel.transmissivity) * b.channel.bath_photons, 1e-12);
  CHECK(b.loss.beam_db == 0.0);

  m.antenna->spillover_temperature_k = 290.0;  // surroundings warmer than the air
  const auto w = link_budget(m, 0.0).b;
  check_rel(w.channel.bath_photons, planck_occupation(5.4e9, 290.0), 1e-13);
}

TEST_CASE("An ohmic stage adds noise at the antenna's physical temperature, by default the air's") {
  // Closed form: 0.1 dB is a lost fraction 1 - 10^(-0.01); tau = 10^(-0.01); bath
  // planck(f, T_physical). Source side at 300 K, receiver side at the air's 288.15 K:
  // compose({tau, n300}, {tau, n288}).
  check_rel(lost_fraction_from_db(0.1), 1.0 - std::pow(10.0, -0.01), 1e-13);
  LinkModel m = bare_air();
  m.antenna->ohmic_loss = lost_fraction_from_db(0.1);
  m.source_antenna = *m.antenna;
  m.source_antenna->physical_temperature_k = 300.0;
  const double tau = std::pow(10.0, -0.01);
  const Channel expected =
      compose({tau, planck_occupation(5.4e9, 300.0)}, {tau, planck_occupation(5.4e9, 288.15)});
  const auto b = link_budget(m, 0.0).b;
  check_rel(b.channel.transmissivity, expected.transmissivity, 1e-13);
  check_rel(b.channel.bath_photons, expected.bath_photons, 1e-12);
  check_rel(b.loss.ohmic_db, 0.2, 1e-12);
  check_rel(b.noise.ohmic, (1.0 - tau) * planck_occupation(5.4e9, 300.0) * tau +
                               (1.0 - tau) * planck_occupation(5.4e9, 288.15),
            1e-12);
}

TEST_CASE("A mismatch reflects the cold side's noise into the mode") {
  // Closed form: 20 dB return loss reflects |Gamma|^2 = 0.01; the reflected wave comes from the
  // cold side at the interface temperature unless mismatch_temperature_k says otherwise.
  check_rel(reflected_fraction_from_return_loss_db(20.0), 0.01, 1e-15);
  LinkModel m = bare_air();
  m.antenna->interface_temperature_k = 0.05;
  m.antenna->mismatch_loss = reflected_fraction_from_return_loss_db(20.0);
  const double n_cold = planck_occupation(5.4e9, 0.05);
  const auto b = link_budget(m, 0.0).b;
  check_rel(b.channel.transmissivity, 0.99 * 0.99, 1e-15);
  check_rel(b.channel.bath_photons, n_cold, 1e-12);
  check_rel(b.loss.mismatch_db, -20.0 * std::log10(0.99), 1e-13);
  check_rel(b.noise.mismatch, 0.01 * n_cold * 0.99 + 0.01 * n_cold, 1e-12);
  m.antenna->mismatch_temperature_k = 4.0;
  check_rel(link_budget(m, 0.0).b.channel.bath_photons, planck_occupation(5.4e9, 4.0), 1e-12);
}

TEST_CASE("The stages of an antenna path compose from the cold side outwards in the stated order") {
  // The documented rule of link_budget rebuilt from the public pieces: S interface, S mismatch,
  // S ohmic, S spillover, beam, gases, rain, R spillover, R ohmic, R mismatch, R interface.
  // Every stage has its own loss and temperature so that another order gives another bath.
  LinkModel m;
  m.frequency_hz = 5.4e9;
  m.air.rain_mm_per_h = 25.0;
  Antenna s{0.3, 0.8, 0.01, 4.0, 0.003, 290.0, 0.002, 300.0, 0.01, 0.05};
  Antenna r{1.2, 0.7, 0.02, 0.1, 0.004, 295.0, 0.001, 280.0, 0.005, 1.0};
  m.source_antenna = s;
  m.receiver_antenna = r;
  // 0.5 m: near field (the beam loses e^{-58}), so the antenna stages carry the noise.
  const double d = 0.5, f = 5.4e9, f_ghz = 5.4, lambda = speed_of_light / f;
  const double t = m.air.temperature_k;
  const double e = vapour_pressure_hpa(m.air.water_vapour_gm3, t);
  const double n_air = planck_occupation(f, t);
  const double area_s = 0.8 * pi * 0.15 * 0.15, area_r = 0.7 * pi * 0.6 * 0.6;
  const double beam_lost = std::exp(-area_s * area_r / (lambda * d * lambda * d));  // Goubau
  const double beam = 1.0 - beam_lost;
  const double gas_db = gaseous_attenuation(f_ghz, 1013.25 - e, e, t).total() * d / 1000.0;
  const double rain_db = rain_attenuation(f_ghz, 25.0, 0.0, 0.0) * d / 1000.0;
  auto stage = [&](double x, double temp, int cause) {
    return HandStage{{1.0 - x, planck_occupation(f, temp)}, x, cause};
  };
  enum { interface, mismatch, ohmic, spillover, beam_c, air, rain, causes };
  const std::vector<HandStage> path = {
      stage(0.01, 4.0, interface),
      stage(0.01, 0.05, mismatch),
      stage(0.002, 300.0, ohmic),
      stage(0.003, 290.0, spillover),
      {{beam, n_air}, beam_lost, beam_c},
      {{transmissivity_from_db(gas_db), n_air}, lost_fraction_from_db(gas_db), air},
      {{transmissivity_from_db(rain_db), n_air}, lost_fraction_from_db(rain_db), rain},
      stage(0.004, 295.0, spillover),
      stage(0.001, 280.0, ohmic),
      stage(0.005, 1.0, mismatch),
      stage(0.02, 0.1, interface)};
  Channel expected;
  for (const auto& st : path) expected = compose(expected, st.channel);

  const auto b = link_budget(m, d).b;
  check_rel(b.channel.transmissivity, expected.transmissivity, 1e-13);
  check_rel(b.channel.bath_photons, expected.bath_photons, 1e-12);
  check_rel(b.loss.interface_db, -10.0 * std::log10(0.99 * 0.98), 1e-12);
  check_rel(b.loss.mismatch_db, -10.0 * std::log10(0.99 * 0.995), 1e-12);
  check_rel(b.loss.ohmic_db, -10.0 * std::log10(0.998 * 0.999), 1e-12);
  check_rel(b.loss.spillover_db, -10.0 * std::log10(0.997 * 0.996), 1e-12);
  check_rel(b.loss.beam_db, -10.0 / std::log(10.0) * std::log1p(-beam_lost), 1e-12);
  check_rel(b.loss.air_db, gas_db, 1e-12);
  check_rel(b.loss.rain_db, rain_db, 1e-12);
  check_rel(b.loss.total_db(), -10.0 * std::log10(b.channel.transmissivity), 1e-12);

  // Added photons: stage i contributes (1 - tau_i) n_i prod_{j > i} tau_j (closed form), summed
  // by cause; the sum over causes is (1 - tau) n_E.
  double by_cause[causes] = {};
  for (std::size_t i = 0; i < path.size(); ++i) {
    double later = 1.0;
    for (std::size_t j = i + 1; j < path.size(); ++j) later *= path[j].channel.transmissivity;
    by_cause[path[i].cause] += path[i].lost * path[i].channel.bath_photons * later;
  }
  check_rel(b.noise.interface, by_cause[interface], 1e-12);
  check_rel(b.noise.mismatch, by_cause[mismatch], 1e-12);
  check_rel(b.noise.ohmic, by_cause[ohmic], 1e-12);
  check_rel(b.noise.spillover, by_cause[spillover], 1e-12);
  check_rel(b.noise.beam, by_cause[beam_c], 1e-12);
  check_rel(b.noise.air, by_cause[air], 1e-12);
  check_rel(b.noise.rain, by_cause[rain], 1e-12);
  check_rel(b.noise.total(), (1.0 - expected.transmissivity) * expected.bath_photons, 1e-12);

  // The check is sensitive to the order: the receiver's stages in the source's order (interface
  // outermost at the air side) give another bath.
  std::vector<HandStage> swapped = path;
  std::reverse(swapped.begin() + 7, swapped.end());
  Channel other;
  for (const auto& st : swapped) other = compose(other, st.channel);
  CHECK(std::abs(other.bath_photons / expected.bath_photons - 1.0) > 1e-3);
}

TEST_CASE("Added photons by cause add up to the noise of the composed channel on every medium") {
  // Closed form: the contributions sum to (1 - tau) n_E (AddedPhotons' definition); a line has
  // one stage, a measured channel books its (1 - tau) n_E to `direct`.
  LinkModel m;
  m.antenna = Antenna{0.6, 0.7, 0.01, 4.0, 0.02, std::nullopt, 0.01, std::nullopt, 0.01};
  m.air.rain_mm_per_h = 10.0;
  for (Geometry g : {Geometry::one_way, Geometry::midpoint})
    for (double d : {0.0, 1.0, 30.0, 3000.0}) {
      m.geometry = g;
      const auto budget = link_budget(m, d);
      for (const ModeBudget* x : {&budget.a, &budget.b}) {
        CAPTURE(d);
        const double noise = (1.0 - x->channel.transmissivity) * x->channel.bath_photons;
        if (noise == 0.0)
          CHECK(x->noise.total() == 0.0);
        else
          check_rel(x->noise.total(), noise, 1e-12);
      }
    }
  LinkModel line;
  line.medium = Medium::line;
  const auto l = link_budget(line, 30.0).b;
  check_rel(l.noise.line, (1.0 - l.channel.transmissivity) * l.channel.bath_photons, 1e-12);
  LinkModel direct;
  direct.direct = DirectChannels{{0.99, 0.1}, {0.95, 1250.0}};
  check_rel(link_budget(direct, 1.0).b.noise.direct, 0.05 * 1250.0, 1e-14);
  check_rel(link_budget(direct, 1.0).a.noise.direct, 0.01 * 0.1, 1e-13);
}

TEST_CASE("Ideal antennas and per-end copies of the antenna leave the link budget unchanged bit for bit") {
  // The original model is the default: per-end overrides equal to `antenna`, and zero-loss
  // stages whatever their temperatures, give identical doubles (zero losses leave no stage).
  for (Geometry g : {Geometry::one_way, Geometry::midpoint})
    for (double rain : {0.0, 25.0})
      for (double d : {0.0, 0.7, 3.0, 40.0}) {
        LinkModel m;
        m.frequency_hz = 5.4e9;
        m.geometry = g;
        m.air.rain_mm_per_h = rain;
        m.antenna = Antenna{1.2, 0.7, 0.013, 0.05};
        const auto base = link_budget(m, d);
        LinkModel copy = m;
        copy.source_antenna = m.antenna;
        copy.receiver_antenna = m.antenna;
        copy.source_antenna->spillover_temperature_k = 1000.0;
        copy.receiver_antenna->physical_temperature_k = 1000.0;
        copy.receiver_antenna->mismatch_temperature_k = 1000.0;
        copy.frequency_a_hz = 5.4e9;
        copy.frequency_b_hz = 5.4e9;
        const auto same = link_budget(copy, d);
        CAPTURE(d);
        check_same(same.a, base.a);
        check_same(same.b, base.b);
        CHECK(uses_ideal_antennas(copy));
      }
}

TEST_CASE("A small horn and a dish couple by Goubau's formula with unequal effective areas") {
  // Goubau: T = 1 - exp(-A_t A_r / (lambda d)^2), symmetric in the two areas (reciprocity);
  // far field: Friis A_t A_r / (lambda d)^2.
  LinkModel m = bare_air();
  m.antenna.reset();
  m.source_antenna = Antenna{0.25, 0.8};
  m.receiver_antenna = Antenna{1.2, 0.7};
  const double at = 0.8 * pi * 0.125 * 0.125, ar = 0.7 * pi * 0.6 * 0.6;
  const double lambda = speed_of_light / 5.4e9;
  for (double d : {0.5, 2.0, 20.0, 2000.0}) {
    CAPTURE(d);
    const double x = at * ar / (lambda * d * lambda * d);
    const double goubau = -std::expm1(-x);
    const auto b = link_budget(m, d).b;
    check_rel(b.loss.beam_db, -10.0 / std::log(10.0) * std::log1p(-std::exp(-x)), 1e-12);
    check_rel(b.channel.transmissivity, goubau, 1e-12);
    LinkModel swapped = m;
    std::swap(swapped.source_antenna, swapped.receiver_antenna);
    check_rel(link_budget(swapped, d).b.loss.beam_db, b.loss.beam_db, 1e-14);
  }
  const auto far = link_budget(m, 2000.0).b;
  check_rel(far.channel.transmissivity, friis_coupling(at, ar, lambda, 2000.0), 1e-4);
}

TEST_CASE("The midpoint geometry transmits with the source antenna and receives with the receiver's on both arms") {
  LinkModel m = bare_air();
  m.antenna.reset();
  m.source_antenna = Antenna{0.25, 0.8, 0.0, 4.0, 0.01};
  m.receiver_antenna = Antenna{1.2, 0.7, 0.0, 4.0, 0.0, std::nullopt, 0.002};
  m.geometry = Geometry::midpoint;
  const auto mid = link_budget(m, 3.0);
  m.geometry = Geometry::one_way;
  const auto half = link_budget(m, 1.5);
  check_same(mid.a, half.b);
  check_same(mid.b, half.b);
}

TEST_CASE("An antenna at one end only is an input error naming the end without one") {
  LinkModel m;
  m.source_antenna = Antenna{};
  bool thrown = false;
  try {
    link_budget(m, 1.0);
  } catch (const InputError& err) {
    thrown = true;
    CHECK(err.key() == "link.receiver_antenna");
  }
  CHECK(thrown);
  m.source_antenna.reset();
  m.receiver_antenna = Antenna{};
  CHECK_THROWS_AS(antenna_pair(m), InputError);
  m.antenna = Antenna{};  // the common antenna fills the source end
  CHECK(antenna_pair(m).has_value());
}

TEST_CASE("Antenna losses outside 0 <= loss < 1 and negative temperatures are input errors naming the key") {
  struct Case {
    void (*set)(Antenna&);
    const char* key;
  };
  const Case cases[] = {
      {[](Antenna& a) { a.spillover_loss = 1.0; }, "link.antenna.spillover_loss"},
      {[](Antenna& a) { a.ohmic_loss = -1e-3; }, "link.antenna.ohmic_loss"},
      {[](Antenna& a) { a.mismatch_loss = NAN; }, "link.antenna.mismatch_loss"},
      {[](Antenna& a) { a.spillover_temperature_k = -1.0; }, "link.antenna.spillover_temperature_k"},
      {[](Antenna& a) { a.physical_temperature_k = INFINITY; }, "link.antenna.physical_temperature_k"},
      {[](Antenna& a) { a.mismatch_temperature_k = -0.1; }, "link.antenna.mismatch_temperature_k"}};
  for (const auto& c : cases) {
    LinkModel m;
    m.antenna = Antenna{};
    c.set(*m.antenna);
    std::string key;
    try {
      link_budget(m, 1.0);
    } catch (const InputError& err) {
      key = err.key();
    }
    CHECK(key == c.key);
  }
  LinkModel m;
  m.antenna = Antenna{};
  m.receiver_antenna = Antenna{};
  m.receiver_antenna->ohmic_loss = 2.0;
  CHECK_THROWS_WITH_AS(link_budget(m, 1.0), doctest::Contains("link.receiver_antenna.ohmic_loss"),
                       InputError);
  CHECK_THROWS_AS(lost_fraction_from_db(-0.1), InputError);
  CHECK_THROWS_AS(reflected_fraction_from_return_loss_db(0.0), InputError);
}

TEST_CASE("Ideal antennas are recognised and the typical antenna losses each break entanglement") {
  // Closed form (one-sided thermal loss on a TMSV): entangled iff n_E < tau/(1 - tau). The
  // typical spillover and ohmic loss of the caution line, coupled to 300 K at 5 GHz, each exceed
  // it; the typical mismatch is booked against the cold side.
  LinkModel m;
  CHECK(uses_ideal_antennas(m));  // no antennas: not even the beam spreading
  m.antenna = Antenna{};
  CHECK(uses_ideal_antennas(m));
  m.receiver_antenna = Antenna{};
  m.receiver_antenna->spillover_loss = 0.01;
  CHECK_FALSE(uses_ideal_antennas(m));
  m.medium = Medium::line;
  CHECK_FALSE(uses_ideal_antennas(m));
  LinkModel direct;
  direct.direct = DirectChannels{};
  CHECK_FALSE(uses_ideal_antennas(direct));

  const TypicalAntennaLosses typical;
  const double n = planck_occupation(5e9, 300.0);
  const auto tmsv = gaussian::tmst(squeezing_parameter_from_db(6.0), 0.0);
  for (double lost : {typical.spillover_loss, lost_fraction_from_db(typical.ohmic_loss_db)}) {
    CAPTURE(lost);
    const double tau = 1.0 - lost;
    CHECK(n >= tau / (1.0 - tau));
    CHECK(gaussian::log_negativity(gaussian::apply(tmsv, Mode::B, {tau, n})) == 0.0);
  }
  const std::string caution = ideal_antenna_caution();
  CHECK(caution.find("spill") != std::string::npos);
  CHECK(caution.find("0.1 dB") != std::string::npos);
  CHECK(caution.find("20 dB return loss") != std::string::npos);
}

// ------------------------------------------------------------- survival distance of two dishes

TEST_CASE("Two ideal 1.2 m dishes at 5.4 GHz keep one-way entanglement up to where the path transmits n/(n+1)") {
  // Closed form: beam and gases share the air's bath n, so the one-way channel is (tau(d), n)
  // with tau(d) = (1 - exp(-(A/(lambda d))^2)) exp(-mu d), and a TMSV stays entangled iff
  // tau > n/(n + 1) (one-sided thermal loss). The root is found here by bisection on that
  // expression; link_budget + log_negativity must flip across it.
  LinkModel m;
  m.frequency_hz = 5.4e9;
  m.antenna = Antenna{1.2, 0.7};
  m.air.temperature_k = 288.15;
  const double t = 288.15, e = vapour_pressure_hpa(7.5, t);
  const double mu = per_metre_from_db_per_km(gaseous_attenuation(5.4, 1013.25 - e, e, t).total());
  const double n = planck_occupation(5.4e9, t);
  const double area = 0.7 * pi * 0.6 * 0.6, lambda = speed_of_light / 5.4e9;
  auto tau = [&](double d) {
    const double x = area / (lambda * d);
    return -std::expm1(-x * x) * std::exp(-mu * d);
  };
  double lo = 0.1, hi = 100.0;  // tau(lo) > n/(n+1) > tau(hi)
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    (tau(mid) > n / (n + 1.0) ? lo : hi) = mid;
  }
  const double d_max = lo;
  const auto s = gaussian::tmst(squeezing_parameter_from_db(6.0), 0.0);
  CHECK(gaussian::log_negativity(one_way_state(s, link_budget(m, 0.999 * d_max))) > 0.0);
  CHECK(gaussian::log_negativity(one_way_state(s, link_budget(m, 1.001 * d_max))) == 0.0);
}

TEST_CASE("Spillover of 2 % at 290 K per antenna leaves no distance at which the two dishes stay entangled") {
  // Closed form at d = 0 (beam 1, no gases): tau = (1 - s)^2, added noise s n (2 - s) with
  // n = planck(5.4 GHz, 290 K); entangled iff s n (2 - s) < (1 - s)^2, i.e.
  // s < s_max = 1 - sqrt(n / (n + 1)). 2 % is ~45 times s_max; the noise only grows with d.
  LinkModel m;
  m.frequency_hz = 5.4e9;
  m.antenna = Antenna{1.2, 0.7};
  m.antenna->spillover_loss = 0.02;
  m.antenna->spillover_temperature_k = 290.0;
  const double n = planck_occupation(5.4e9, 290.0);
  const auto s = gaussian::tmst(squeezing_parameter_from_db(6.0), 0.0);
  const auto at0 = link_budget(m, 0.0).b;
  check_rel(at0.noise.total(), 0.02 * n * (2.0 - 0.02), 1e-12);
  for (double d : {0.0, 0.5, 1.0, 2.0, 5.0, 10.0})
    CHECK(gaussian::log_negativity(one_way_state(s, link_budget(m, d))) == 0.0);

  const double s_max = 1.0 - std::sqrt(n / (n + 1.0));
  for (double f : {0.999, 1.001}) {
    m.antenna->spillover_loss = f * s_max;
    const double en = gaussian::log_negativity(one_way_state(s, link_budget(m, 0.0)));
    CAPTURE(f);
    CHECK((f < 1.0 ? en > 0.0 : en == 0.0));
  }
}

// ------------------------------------------------------------------ a nondegenerate source

TEST_CASE("A nondegenerate source whose two frequencies are equal gives the degenerate budget") {
  LinkModel m;
  m.frequency_hz = 5.4e9;
  m.antenna = Antenna{1.2, 0.7, 0.01, 4.0, 0.001};
  m.air.rain_mm_per_h = 5.0;
  CHECK(mode_frequency_hz(m, Mode::A) == 5.4e9);
  CHECK(mode_frequency_hz(m, Mode::B) == 5.4e9);
  for (Geometry g : {Geometry::one_way, Geometry::midpoint}) {
    m.geometry = g;
    LinkModel nd = m;
    nd.frequency_a_hz = 5.4e9;
    nd.frequency_b_hz = 5.4e9;
    const auto x = link_budget(m, 4.0), y = link_budget(nd, 4.0);
    check_same(y.a, x.a);
    check_same(y.b, x.b);
  }
}

TEST_CASE("Each mode of a nondegenerate source sees Planck, the ITU tables and Goubau at its own frequency") {
  // Planck (closed form), ITU-R P.676-13 gases and P.838-3 rain and Goubau, each evaluated at the
  // mode's frequency, exactly as the degenerate model at that frequency does.
  LinkModel m;
  m.geometry = Geometry::midpoint;
  m.antenna = Antenna{1.2, 0.7, 0.01, 4.0, 0.002};
  m.air.rain_mm_per_h = 25.0;
  m.frequency_a_hz = 4.8e9;
  m.frequency_b_hz = 6.2e9;
  const double d = 6.0, l = 3.0;
  const auto nd = link_budget(m, d);
  for (auto [mode, f] : {std::pair{Mode::A, 4.8e9}, std::pair{Mode::B, 6.2e9}}) {
    CAPTURE(f);
    LinkModel deg = m;
    deg.frequency_a_hz.reset();
    deg.frequency_b_hz.reset();
    deg.frequency_hz = f;
    const auto ref = link_budget(deg, d);
    const ModeBudget& x = mode == Mode::A ? nd.a : nd.b;
    check_same(x, ref.a);
    const double t = m.air.temperature_k, e = vapour_pressure_hpa(7.5, t);
    check_rel(x.loss.air_db, gaseous_attenuation(f * 1e-9, 1013.25 - e, e, t).total() * l / 1000.0,
              1e-12);
    check_rel(x.loss.rain_db, rain_attenuation(f * 1e-9, 25.0) * l / 1000.0, 1e-12);
    const double area = 0.7 * pi * 0.6 * 0.6, lambda = speed_of_light / f;
    const double x2 = area / (lambda * l) * (area / (lambda * l));
    check_rel(x.loss.beam_db, -10.0 / std::log(10.0) * std::log1p(-std::exp(-x2)), 1e-12);
  }
  CHECK(nd.a.channel.transmissivity != nd.b.channel.transmissivity);

  LinkModel line;
  line.medium = Medium::line;
  line.geometry = Geometry::midpoint;
  line.line.temperature_k = 0.05;
  line.frequency_a_hz = 4.8e9;
  line.frequency_b_hz = 6.2e9;
  const auto lb = link_budget(line, 30.0);
  check_rel(lb.a.channel.bath_photons, 1.0 / std::expm1(planck_h * 4.8e9 / (boltzmann_k * 0.05)), 1e-13);
  check_rel(lb.b.channel.bath_photons, 1.0 / std::expm1(planck_h * 6.2e9 / (boltzmann_k * 0.05)), 1e-13);

  LinkModel bad;
  bad.frequency_b_hz = 0.0;
  CHECK_THROWS_WITH_AS(link_budget(bad, 1.0), doctest::Contains("link.frequency_b_hz"), InputError);
}

// ------------------------------------------------------------------ the source as measured

TEST_CASE("Measured squeezing and antisqueezing give back the TMST they describe") {
  // Closed form: EPR variances of a TMST are (2n + 1) e^{-+2r} (V_-+ = (a + b -+ 2c)/2); the
  // inverse is r = (S + A) ln10/40, 2n + 1 = 10^{(A - S)/20}.
  const double cases[][2] = {{0.5, 0.0}, {squeezing_parameter_from_db(6.0), 0.1}, {1.2, 0.02},
                             {0.1, 2.0}};
  for (const auto& c : cases) {
    const double r = c[0], n = c[1];
    CAPTURE(r);
    CAPTURE(n);
    const auto v = gaussian::epr_variances(gaussian::tmst(r, n));
    check_rel(v.squeezed, (2.0 * n + 1.0) * std::exp(-2.0 * r), 1e-14);
    check_rel(v.antisqueezed, (2.0 * n + 1.0) * std::exp(2.0 * r), 1e-14);
    const auto p = gaussian::tmst_from_measured_db(-10.0 * std::log10(v.squeezed),
                                                    10.0 * std::log10(v.antisqueezed));
    check_rel(p.r, r, 1e-13);
    if (n == 0.0)
      CHECK(std::abs(p.thermal_photons) <= 1e-14);
    else
      check_rel(p.thermal_photons, n, 1e-12);
  }
}

TEST_CASE("Six dB of squeezing without thermal noise is V_- = 10^-0.6 and V_+ = 10^0.6") {
  // Closed form: r = 6 ln10/20, n_th = 0 <-> V_-+ = e^{-+2r} = 10^{-+0.6}.
  const auto p = gaussian::tmst_from_measured_db(6.0, 6.0);
  check_rel(p.r, squeezing_parameter_from_db(6.0), 1e-15);
  CHECK(p.thermal_photons == 0.0);
  const auto v = gaussian::epr_variances(gaussian::tmst(p.r, 0.0));
  check_rel(v.squeezed, std::pow(10.0, -0.6), 1e-14);
  check_rel(v.antisqueezed, std::pow(10.0, 0.6), 1e-14);
}

TEST_CASE("Squeezing above the antisqueezing is refused as below the uncertainty relation") {
  // Closed form: V_- V_+ = 10^{(A - S)/10}; 6 dB against 5 dB gives 10^{-0.1} = 0.7943282347.
  std::string what, key;
  try {
    gaussian::tmst_from_measured_db(6.0, 5.0);
  } catch (const InputError& err) {
    what = err.what();
    key = err.key();
  }
  CHECK(key == "source.measured_antisqueezing_db");
  CHECK(what.find("V_- V_+ = 0.7943282347") != std::string::npos);
  CHECK_THROWS_WITH_AS(gaussian::tmst_from_measured_db(-3.0, 1.0), doctest::Contains("swapped"),
                       InputError);
  CHECK_THROWS_AS(gaussian::tmst_from_measured_db(NAN, 1.0), InputError);
}

TEST_CASE("A measured TMST matrix gives its standard form in every vacuum convention and quadrature order") {
  // Closed form: the TMST CM (a = b = (2n+1) cosh 2r, c = (2n+1) sinh 2r) written with vacuum
  // variance 1, 1/2 or 1/4 is divided by 1, 2 or 4; the grouped order is the same matrix with
  // rows and columns permuted. Its symplectic eigenvalues are both 2n + 1 (a squeezed thermal
  // product state).
  const double r = 0.8, n = 0.07;
  const auto s = gaussian::tmst(r, n);
  const auto v = gaussian::covariance(s);
  using gaussian::QuadratureOrder;
  using gaussian::VacuumVariance;
  for (auto [vacuum, factor] : {std::pair{VacuumVariance::one, 1.0}, std::pair{VacuumVariance::half, 0.5},
                                std::pair{VacuumVariance::quarter, 0.25}})
    for (QuadratureOrder order : {QuadratureOrder::interleaved, QuadratureOrder::grouped}) {
      CAPTURE(factor);
      const gaussian::Covariance written =
          factor * (order == QuadratureOrder::grouped ? grouped(v) : v);
      const auto m = gaussian::analyse_measured_covariance(written, {vacuum, order});
      check_rel(m.form.a, s.a, 1e-14);
      check_rel(m.form.b, s.b, 1e-14);
      check_rel(m.form.c, s.c, 1e-14);
      CHECK(m.asymmetry.largest() <= 1e-15);
      CHECK(m.rotation_b_rad == 0.0);
      check_rel(m.smallest_symplectic, 2.0 * n + 1.0, 1e-12);
      const auto f = gaussian::standard_form_from_measured(written, {vacuum, order});
      CHECK(f.c == m.form.c);
    }
  // The grouped matrix written out by hand (x_A, x_B, p_A, p_B).
  gaussian::Covariance g;
  g << s.a, s.c, 0, 0, s.c, s.b, 0, 0, 0, 0, s.a, -s.c, 0, 0, -s.c, s.b;
  const auto f = gaussian::standard_form_from_measured(g, {VacuumVariance::one, QuadratureOrder::grouped});
  check_rel(f.c, s.c, 1e-15);
  check_rel(f.a, s.a, 1e-15);
}

TEST_CASE("Locally rotated matrices are brought back to standard form without changing their entanglement") {
  // Closed form: local phase rotations keep a, b, |C_z| and the partially transposed symplectic
  // eigenvalue; the returned rotation undoes them. Two single-mode squeezed states combined on a
  // 50:50 hybrid give the TMST with c < 0 (closed form), a rotation by pi away. E_N of the
  // reduced form is compared with the general-CM formula (Adesso & Illuminati, PRA 72, 032334
  // (2005)) on the rotated matrix.
  const auto lossy = gaussian::apply(gaussian::tmst(1.0, 0.05), Mode::B, {0.7, 0.3});
  const auto hybrid = gaussian::tmst(0.7, 0.05);
  const gaussian::StandardForm negative_c{hybrid.a, hybrid.b, -hybrid.c};
  struct Case {
    gaussian::StandardForm s;
    double ta, tb;
  };
  const Case cases[] = {{lossy, 0.3, -1.1}, {lossy, 2.5, 0.0}, {lossy, -0.4, 3.0},
                        {gaussian::tmst(0.5, 0.0), 1.0, 1.0}, {negative_c, 0.0, 0.0}};
  for (const auto& c : cases) {
    CAPTURE(c.ta);
    CAPTURE(c.tb);
    const auto measured = gaussian::rotate(gaussian::covariance(c.s), c.ta, c.tb);
    const auto m = gaussian::analyse_measured_covariance(measured, {});
    check_rel(m.form.a, c.s.a, 1e-13);
    check_rel(m.form.b, c.s.b, 1e-13);
    check_rel(m.form.c, std::abs(c.s.c), 1e-13);
    CHECK(m.asymmetry.largest() <= 1e-13);
    const auto back = gaussian::rotate(measured, m.rotation_a_rad, m.rotation_b_rad);
    const auto target = gaussian::covariance(m.form);
    CHECK((back - target).cwiseAbs().maxCoeff() <= 1e-13 * target.cwiseAbs().maxCoeff());
    check_rel(gaussian::smallest_pt_symplectic(m.form), gaussian::smallest_pt_symplectic(measured),
              1e-11);
  }
}

TEST_CASE("Unphysical matrices are refused with the smallest symplectic eigenvalue named") {
  // Closed form: a TMSV has symplectic eigenvalues 1; written with vacuum variance 1/4 but
  // declared as vacuum variance 1 they become 1/4. A TMST with (2n + 1) = 0.9 has 0.9.
  const auto v = gaussian::covariance(gaussian::tmst(0.7, 0.0));
  std::string value, key;
  try {
    gaussian::analyse_measured_covariance(0.25 * v, {});
  } catch (const InputError& err) {
    value = err.value();
    key = err.key();
  }
  CHECK(key == "source.covariance");
  CHECK(std::abs(std::stod(value) - 0.25) <= 1e-9);
  // The same matrix with its convention stated is accepted.
  CHECK(gaussian::analyse_measured_covariance(0.25 * v, {gaussian::VacuumVariance::quarter, {}})
            .smallest_symplectic == doctest::Approx(1.0).epsilon(1e-12));

  const gaussian::StandardForm below{0.9 * std::cosh(1.4), 0.9 * std::cosh(1.4), 0.9 * std::sinh(1.4)};
  CHECK_THROWS_WITH_AS(gaussian::analyse_measured_covariance(gaussian::covariance(below), {}),
                       doctest::Contains("= 0.9"), InputError);

  auto skew = v;
  skew(0, 2) += 1e-3;
  CHECK_THROWS_WITH_AS(gaussian::analyse_measured_covariance(skew, {}), doctest::Contains("symmetric"),
                       InputError);
  auto indefinite = v;
  indefinite(1, 1) = -1.0;
  CHECK_THROWS_WITH_AS(gaussian::analyse_measured_covariance(indefinite, {}),
                       doctest::Contains("positive-definite"), InputError);
  auto nan = v;
  nan(3, 3) = NAN;
  CHECK_THROWS_AS(gaussian::analyse_measured_covariance(nan, {}), InputError);
}

TEST_CASE("Phase-sensitive matrices are refused with the asymmetry of each block named") {
  // Closed form: a TMST (a, b, c) followed by a single-mode squeezer diag(e^s, e^-s) on mode A
  // has A = a diag(e^{2s}, e^{-2s}) (asymmetry tanh 2s), B untouched (0) and
  // C = c diag(e^s, -e^{-s}) = c cosh s Z + c sinh s I (asymmetry c sinh s / sqrt(a cosh 2s b));
  // its phase-symmetric part is (a cosh 2s, b, c cosh s). A correlation C = c I (det C > 0, of
  // beam-splitter type) is all phase-sensitive: asymmetry c / sqrt(a b).
  const auto s = gaussian::tmst(0.6, 0.1);
  const double sq = 0.2;
  Eigen::Matrix4d squeezer = Eigen::Matrix4d::Identity();
  squeezer(0, 0) = std::exp(sq);
  squeezer(1, 1) = std::exp(-sq);
  const gaussian::Covariance v = squeezer * gaussian::covariance(s) * squeezer.transpose();
  const auto m = gaussian::analyse_measured_covariance(v, {});
  check_rel(m.asymmetry.a, std::tanh(2.0 * sq), 1e-13);
  CHECK(m.asymmetry.b <= 1e-15);
  check_rel(m.asymmetry.c, s.c * std::sinh(sq) / std::sqrt(s.a * std::cosh(2.0 * sq) * s.b), 1e-13);
  check_rel(m.form.a, s.a * std::cosh(2.0 * sq), 1e-13);
  check_rel(m.form.b, s.b, 1e-14);
  check_rel(m.form.c, s.c * std::cosh(sq), 1e-13);

  std::string what, value;
  try {
    gaussian::standard_form_from_measured(v, {});
  } catch (const InputError& err) {
    what = err.what();
    value = err.value();
  }
  CHECK(std::abs(std::stod(value) - std::tanh(2.0 * sq)) <= 1e-9);
  CHECK(what.find("phase-symmetric") != std::string::npos);
  CHECK(what.find("A 0.379948962") != std::string::npos);  // tanh 0.4 = 0.3799489623
  // Accepted when the caller tolerates that much.
  check_rel(gaussian::standard_form_from_measured(v, {}, 0.5).a, m.form.a, 1e-15);

  gaussian::Covariance split = Eigen::Matrix4d::Identity() * 3.0;
  split(0, 2) = split(2, 0) = split(1, 3) = split(3, 1) = 1.0;
  const auto bs = gaussian::analyse_measured_covariance(split, {});
  check_rel(bs.asymmetry.c, 1.0 / 3.0, 1e-14);
  CHECK(bs.form.c <= 1e-15);
  CHECK_THROWS_AS(gaussian::standard_form_from_measured(split, {}), InputError);
}

TEST_CASE("The smallest symplectic eigenvalue is kept to round-off under symplectic transformations") {
  // Williamson: V = S diag(nu_1, nu_1, nu_2, nu_2) S^T has symplectic eigenvalues nu_1, nu_2
  // for any symplectic S; S built here from a two-mode squeezer, a beam splitter, local
  // squeezers and rotations (each symplectic in closed form). nu_1 = nu_2 = 1 is a pure state.
  auto two_mode_squeezer = [](double r) {
    Eigen::Matrix4d s = Eigen::Matrix4d::Identity() * std::cosh(r);
    s(0, 2) = s(2, 0) = std::sinh(r);
    s(1, 3) = s(3, 1) = -std::sinh(r);
    return s;
  };
  auto beam_splitter = [](double theta) {
    Eigen::Matrix4d s = Eigen::Matrix4d::Identity() * std::cos(theta);
    s(0, 2) = s(1, 3) = std::sin(theta);
    s(2, 0) = s(3, 1) = -std::sin(theta);
    return s;
  };
  auto local_squeezers = [](double sa, double sb) {
    Eigen::Matrix4d s = Eigen::Matrix4d::Zero();
    s(0, 0) = std::exp(sa), s(1, 1) = std::exp(-sa), s(2, 2) = std::exp(sb), s(3, 3) = std::exp(-sb);
    return s;
  };
  const double spectra[][2] = {{1.0, 1.0}, {1.0, 3.0}, {1.2, 1.2}, {2.5, 40.0}};
  for (const auto& nu : spectra) {
    gaussian::Covariance d = gaussian::Covariance::Zero();
    d(0, 0) = d(1, 1) = nu[0];
    d(2, 2) = d(3, 3) = nu[1];
    const Eigen::Matrix4d s = local_squeezers(0.3, -0.7) * beam_splitter(0.4) * two_mode_squeezer(1.1);
    const gaussian::Covariance v = gaussian::rotate(s * d * s.transpose(), 0.9, -2.0);
    CAPTURE(nu[0]);
    CAPTURE(nu[1]);
    check_rel(gaussian::smallest_symplectic(v), std::min(nu[0], nu[1]), 1e-12);
  }
  CHECK(gaussian::smallest_symplectic(-gaussian::Covariance::Identity()) == 0.0);  // not V > 0
}

TEST_CASE("The smallest symplectic eigenvalue of a thermal product state is 2n + 1") {
  // Closed form: V = (2n_a + 1) I + (2n_b + 1) I has symplectic eigenvalues 2n_a + 1, 2n_b + 1.
  gaussian::Covariance v = gaussian::Covariance::Identity();
  v(0, 0) = v(1, 1) = 3.0;
  v(2, 2) = v(3, 3) = 1.4;
  check_rel(gaussian::smallest_symplectic(v), 1.4, 1e-15);
  check_rel(gaussian::smallest_symplectic(gaussian::covariance(gaussian::tmst(2.0, 0.0))), 1.0, 1e-12);
}
