#include "heraldry/link.hpp"

#include <cmath>
#include <limits>
#include <numbers>
#include <sstream>
#include <string>

#include "heraldry/common.hpp"
#include "link/input_checks.hpp"

namespace heraldry::link {

namespace {

using detail::require;

bool finite_nonnegative(double x) { return std::isfinite(x) && x >= 0.0; }

}  // namespace

// 1 - tau1 tau2 is formed as (1 - tau1) + tau1 (1 - tau2): no cancellation when both are close
// to 1, where the bath occupation matters most (n ~ 1250 at 300 K multiplies it).
Channel compose(const Channel& first, const Channel& second) {
  const double t1 = first.transmissivity, t2 = second.transmissivity;
  const double loss = (1.0 - t1) + t1 * (1.0 - t2);
  if (loss <= 0.0) return {1.0, 0.0};  // two identity channels: no bath couples in
  const double n = (t2 * (1.0 - t1) * first.bath_photons + (1.0 - t2) * second.bath_photons) / loss;
  return {t1 * t2, n};
}

double planck_occupation(double frequency_hz, double temperature_k) {
  require(std::isfinite(frequency_hz) && frequency_hz > 0.0, "frequency_hz", frequency_hz,
          "a frequency > 0 Hz");
  require(finite_nonnegative(temperature_k), "temperature_k", temperature_k,
          "a temperature >= 0 K");
  if (temperature_k == 0.0) return 0.0;
  const double x = planck_h * frequency_hz / (boltzmann_k * temperature_k);
  return 1.0 / std::expm1(x);  // x large: expm1 = inf, n = 0 (no overflow trap, no NaN)
}

// Goubau, with -expm1(-tau^2) so that the far field keeps full relative precision
// (T ~ tau^2 down to tau^2 ~ 1e-300).
double beam_coupling(double area_t_m2, double area_r_m2, double wavelength_m, double distance_m) {
  require(finite_nonnegative(area_t_m2), "area_t_m2", area_t_m2, "an area >= 0 m^2");
  require(finite_nonnegative(area_r_m2), "area_r_m2", area_r_m2, "an area >= 0 m^2");
  require(std::isfinite(wavelength_m) && wavelength_m > 0.0, "wavelength_m", wavelength_m,
          "a wavelength > 0 m");
  require(finite_nonnegative(distance_m), "distance_m", distance_m, "a distance >= 0 m");
  if (distance_m == 0.0) return area_t_m2 > 0.0 && area_r_m2 > 0.0 ? 1.0 : 0.0;
  const double tau = std::sqrt(area_t_m2 * area_r_m2) / (wavelength_m * distance_m);
  return -std::expm1(-tau * tau);
}

double friis_coupling(double area_t_m2, double area_r_m2, double wavelength_m, double distance_m) {
  require(finite_nonnegative(area_t_m2), "area_t_m2", area_t_m2, "an area >= 0 m^2");
  require(finite_nonnegative(area_r_m2), "area_r_m2", area_r_m2, "an area >= 0 m^2");
  require(std::isfinite(wavelength_m) && wavelength_m > 0.0, "wavelength_m", wavelength_m,
          "a wavelength > 0 m");
  require(std::isfinite(distance_m) && distance_m > 0.0, "distance_m", distance_m,
          "a distance > 0 m (Friis has no near field)");
  const double ld = wavelength_m * distance_m;
  return area_t_m2 * area_r_m2 / (ld * ld);
}

double lost_fraction_from_db(double loss_db) {
  require(std::isfinite(loss_db) && loss_db >= 0.0, "loss_db", loss_db, "a loss >= 0 dB");
  return -std::expm1(-loss_db * std::numbers::ln10 / 10.0);
}

double reflected_fraction_from_return_loss_db(double return_loss_db) {
  require(std::isfinite(return_loss_db) && return_loss_db > 0.0, "return_loss_db", return_loss_db,
          "a return loss > 0 dB");
  return std::pow(10.0, -return_loss_db / 10.0);
}

double mode_frequency_hz(const LinkModel& model, Mode mode) {
  const std::optional<double>& own = mode == Mode::A ? model.frequency_a_hz : model.frequency_b_hz;
  return own ? *own : model.frequency_hz;
}

std::optional<AntennaPair> antenna_pair(const LinkModel& m) {
  const std::optional<Antenna>& s = m.source_antenna ? m.source_antenna : m.antenna;
  const std::optional<Antenna>& r = m.receiver_antenna ? m.receiver_antenna : m.antenna;
  if (!s && !r) return std::nullopt;
  require(s.has_value(), "link.source_antenna", 0.0,
          "an antenna at the source side too (link.antenna or link.source_antenna)",
          "an open-air beam needs an aperture at both ends");
  require(r.has_value(), "link.receiver_antenna", 0.0,
          "an antenna at the receiver side too (link.antenna or link.receiver_antenna)",
          "an open-air beam needs an aperture at both ends");
  return AntennaPair{*s, *r};
}

namespace {

bool lossless(const Antenna& a) {
  return a.spillover_loss == 0.0 && a.ohmic_loss == 0.0 && a.mismatch_loss == 0.0;
}

}  // namespace

bool uses_ideal_antennas(const LinkModel& m) {
  if (m.direct || m.medium != Medium::air) return false;
  const auto pair = antenna_pair(m);
  return !pair || (lossless(pair->source) && lossless(pair->receiver));
}

std::string ideal_antenna_caution() {
  const TypicalAntennaLosses t;
  std::ostringstream s;
  s << "antennas are ideal (Goubau's optimally illuminated apertures; no spillover, ohmic or "
       "mismatch loss): a best case. Real ones spill ~"
    << t.spillover_loss * 100.0 << " % of the feed pattern into the room and lose ~"
    << t.ohmic_loss_db << " dB ohmically, either alone more than one-way entanglement tolerates "
    << "against a 300 K bath (~8e-4), and reflect ~"
    << reflected_fraction_from_return_loss_db(t.return_loss_db) * 100.0 << " % at the feed ("
    << t.return_loss_db << " dB return loss)";
  return s.str();
}

namespace {

// One cause of loss on the path: its channel, its lost power fraction 1 - tau and its loss in dB
// (both formed from the cause's own parameters, not from the rounded transmissivity, so that
// small losses keep full relative precision) and the breakdown fields it is booked to.
struct Stage {
  Channel channel;
  double lost;
  double loss_db;
  double LossBreakdown::*field;
  double AddedPhotons::*noise;
};

// -10 log10(1 - x) for a lost power fraction x, accurate for small x.
double db_of_lost_fraction(double x) { return -10.0 / std::numbers::ln10 * std::log1p(-x); }

constexpr double AddedPhotons::*all_noise[] = {
    &AddedPhotons::beam,   &AddedPhotons::air,       &AddedPhotons::rain,
    &AddedPhotons::interface, &AddedPhotons::line,   &AddedPhotons::direct,
    &AddedPhotons::spillover, &AddedPhotons::ohmic,  &AddedPhotons::mismatch};

// The channel is composed exactly as in the original model (same operations in the same order);
// the added photons follow the recurrence of AddedPhotons: attenuate what is there, add the stage.
ModeBudget run_path(const Stage* stages, std::size_t count) {
  ModeBudget out;
  for (std::size_t i = 0; i < count; ++i) {
    const Stage& st = stages[i];
    out.channel = compose(out.channel, st.channel);
    out.loss.*st.field += st.loss_db;
    for (auto field : all_noise) out.noise.*field *= st.channel.transmissivity;
    out.noise.*st.noise += st.lost * st.channel.bath_photons;
  }
  return out;
}

// A stage of lost power fraction x at bath n.
Stage loss_stage(double x, double n, double LossBreakdown::*field, double AddedPhotons::*noise) {
  return {{1.0 - x, n}, x, db_of_lost_fraction(x), field, noise};
}

void validate_channel(const Channel& c, const char* key) {
  const std::string k(key);
  require(std::isfinite(c.transmissivity) && c.transmissivity > 0.0 && c.transmissivity <= 1.0,
          k + ".transmissivity", c.transmissivity, "a transmissivity in (0, 1]");
  require(finite_nonnegative(c.bath_photons), k + ".bath_photons", c.bath_photons,
          "a mean photon number >= 0");
}

void validate_fraction(double x, const std::string& key) {
  require(std::isfinite(x) && x >= 0.0 && x < 1.0, key, x, "a power fraction in [0, 1)");
}

void validate_temperature(const std::optional<double>& t, const std::string& key) {
  if (t) require(finite_nonnegative(*t), key, *t, "a temperature >= 0 K");
}

void validate_antenna(const Antenna& a, const std::string& prefix) {
  require(std::isfinite(a.diameter_m) && a.diameter_m > 0.0, prefix + ".diameter_m", a.diameter_m,
          "a diameter > 0 m");
  require(std::isfinite(a.aperture_efficiency) && a.aperture_efficiency > 0.0 &&
              a.aperture_efficiency <= 1.0,
          prefix + ".aperture_efficiency", a.aperture_efficiency, "an efficiency in (0, 1]");
  validate_fraction(a.interface_loss, prefix + ".interface_loss");
  require(finite_nonnegative(a.interface_temperature_k), prefix + ".interface_temperature_k",
          a.interface_temperature_k, "a temperature >= 0 K");
  validate_fraction(a.spillover_loss, prefix + ".spillover_loss");
  validate_temperature(a.spillover_temperature_k, prefix + ".spillover_temperature_k");
  validate_fraction(a.ohmic_loss, prefix + ".ohmic_loss");
  validate_temperature(a.physical_temperature_k, prefix + ".physical_temperature_k");
  validate_fraction(a.mismatch_loss, prefix + ".mismatch_loss");
  validate_temperature(a.mismatch_temperature_k, prefix + ".mismatch_temperature_k");
}

void validate_frequency(double f, const char* key) {
  require(std::isfinite(f) && f > 0.0, key, f, "a frequency > 0 Hz");
}

void validate(const LinkModel& m) {
  validate_frequency(m.frequency_hz, "link.frequency_hz");
  if (m.frequency_a_hz) validate_frequency(*m.frequency_a_hz, "link.frequency_a_hz");
  if (m.frequency_b_hz) validate_frequency(*m.frequency_b_hz, "link.frequency_b_hz");
  if (m.medium == Medium::line) {
    require(finite_nonnegative(m.line.loss_db_per_m), "link.line.loss_db_per_m",
            m.line.loss_db_per_m, "a loss >= 0 dB/m");
    require(finite_nonnegative(m.line.temperature_k), "link.line.temperature_k",
            m.line.temperature_k, "a temperature >= 0 K");
    return;
  }
  if (m.antenna) validate_antenna(*m.antenna, "link.antenna");
  if (m.source_antenna) validate_antenna(*m.source_antenna, "link.source_antenna");
  if (m.receiver_antenna) validate_antenna(*m.receiver_antenna, "link.receiver_antenna");
  antenna_pair(m);  // both ends or neither
  const Air& air = m.air;
  require(std::isfinite(air.temperature_k) && air.temperature_k > 0.0, "link.air.temperature_k",
          air.temperature_k, "a temperature > 0 K");
  require(finite_nonnegative(air.rain_mm_per_h), "link.air.rain_mm_per_h", air.rain_mm_per_h,
          "a rain rate >= 0 mm/h");
  if (air.model == AirModel::fixed) {
    require(finite_nonnegative(air.fixed_db_per_km), "link.air.fixed_db_per_km",
            air.fixed_db_per_km, "an attenuation >= 0 dB/km");
  } else {
    require(finite_nonnegative(air.water_vapour_gm3), "link.air.water_vapour_gm3",
            air.water_vapour_gm3, "a water-vapour density >= 0 g/m^3");
    const double e = vapour_pressure_hpa(air.water_vapour_gm3, air.temperature_k);
    require(std::isfinite(air.pressure_hpa) && air.pressure_hpa >= e, "link.air.pressure_hpa",
            air.pressure_hpa,
            "a barometric (total) pressure >= the water-vapour partial pressure rho T / 216.7");
  }
}

double effective_area(const Antenna& a) {
  const double radius = 0.5 * a.diameter_m;
  return a.aperture_efficiency * std::numbers::pi * radius * radius;
}

// The antenna's own stages (mismatch, ohmic, spillover) in the order from the cold side
// outwards; zero losses leave no stage. Appended to `stages` at `count`.
void antenna_stages(const Antenna& a, double f, double t_air, Stage* stages, std::size_t& count) {
  if (a.mismatch_loss > 0.0)
    stages[count++] = loss_stage(
        a.mismatch_loss, planck_occupation(f, a.mismatch_temperature_k.value_or(a.interface_temperature_k)),
        &LossBreakdown::mismatch_db, &AddedPhotons::mismatch);
  if (a.ohmic_loss > 0.0)
    stages[count++] =
        loss_stage(a.ohmic_loss, planck_occupation(f, a.physical_temperature_k.value_or(t_air)),
                   &LossBreakdown::ohmic_db, &AddedPhotons::ohmic);
  if (a.spillover_loss > 0.0)
    stages[count++] =
        loss_stage(a.spillover_loss, planck_occupation(f, a.spillover_temperature_k.value_or(t_air)),
                   &LossBreakdown::spillover_db, &AddedPhotons::spillover);
}

Stage interface_stage(const Antenna& a, double f) {
  return loss_stage(a.interface_loss, planck_occupation(f, a.interface_temperature_k),
                    &LossBreakdown::interface_db, &AddedPhotons::interface);
}

// The path of one travelling mode at frequency f over `length` metres (see link_budget in
// link.hpp).
ModeBudget travel(const LinkModel& m, double f, double length) {
  if (m.medium == Medium::line) {
    const double db = m.line.loss_db_per_m * length;
    const Stage s{{transmissivity_from_db(db), planck_occupation(f, m.line.temperature_k)},
                  -std::expm1(-db * std::numbers::ln10 / 10.0),
                  db,
                  &LossBreakdown::line_db,
                  &AddedPhotons::line};
    return run_path(&s, 1);
  }

  const Air& air = m.air;
  const double n_air = planck_occupation(f, air.temperature_k);
  const double f_ghz = f * 1e-9;

  double gas_db_per_km = air.fixed_db_per_km;
  if (air.model == AirModel::itu) {
    const double e = vapour_pressure_hpa(air.water_vapour_gm3, air.temperature_k);
    gas_db_per_km = gaseous_attenuation(f_ghz, air.pressure_hpa - e, e, air.temperature_k).total();
  }
  const double rain_db_per_km =
      air.rain_mm_per_h > 0.0 ? rain_attenuation(f_ghz, air.rain_mm_per_h, 0.0, 0.0) : 0.0;

  const auto pair = antenna_pair(m);
  Stage stages[11];
  std::size_t count = 0;
  if (pair) {
    const Antenna& s = pair->source;
    const Antenna& r = pair->receiver;
    stages[count++] = interface_stage(s, f);
    antenna_stages(s, f, air.temperature_k, stages, count);
    const double area_s = effective_area(s), area_r = effective_area(r);
    // Equal areas: the geometric mean is the area itself (kept as the original model formed it).
    const double area = area_s == area_r ? area_s : std::sqrt(area_s * area_r);
    const double lambda = speed_of_light / f;
    const double beam = beam_coupling(area_s, area_r, lambda, length);
    // The lost fraction is exp(-tau^2) (Goubau): formed directly, the near-field dB keeps its
    // precision where beam rounds to 1.
    const double tau =
        length > 0.0 ? area / (lambda * length) : std::numeric_limits<double>::infinity();
    const double lost = std::exp(-tau * tau);
    const double beam_db =
        lost < 0.5 ? db_of_lost_fraction(lost) : loss_db_from_transmissivity(beam);
    stages[count++] = {{beam, n_air}, lost < 0.5 ? lost : 1.0 - beam, beam_db,
                       &LossBreakdown::beam_db, &AddedPhotons::beam};
  }
  const double mu_gas = per_metre_from_db_per_km(gas_db_per_km);
  stages[count++] = {{std::exp(-mu_gas * length), n_air},
                     -std::expm1(-mu_gas * length),
                     gas_db_per_km * length / 1000.0,
                     &LossBreakdown::air_db,
                     &AddedPhotons::air};
  const double mu_rain = per_metre_from_db_per_km(rain_db_per_km);
  stages[count++] = {{std::exp(-mu_rain * length), n_air},
                     -std::expm1(-mu_rain * length),
                     rain_db_per_km * length / 1000.0,
                     &LossBreakdown::rain_db,
                     &AddedPhotons::rain};
  if (pair) {
    // The receiver's stages, the mirror image of the source's: spillover, ohmic, mismatch,
    // interface from the air inwards.
    const Antenna& r = pair->receiver;
    Stage own[3];
    std::size_t n_own = 0;
    antenna_stages(r, f, air.temperature_k, own, n_own);
    for (std::size_t i = n_own; i-- > 0;) stages[count++] = own[i];
    stages[count++] = interface_stage(r, f);
  }
  return run_path(stages, count);
}

}  // namespace

LinkBudget link_budget(const LinkModel& model, double distance_m) {
  require(std::isfinite(distance_m) && distance_m >= 0.0, "link.distance_m", distance_m,
          "a distance >= 0 m");
  LinkBudget out;
  out.distance_m = distance_m;

  if (model.direct) {
    validate_channel(model.direct->a, "link.direct.a");
    validate_channel(model.direct->b, "link.direct.b");
    out.a.channel = model.direct->a;
    out.b.channel = model.direct->b;
    out.a.loss.direct_db = loss_db_from_transmissivity(model.direct->a.transmissivity);
    out.b.loss.direct_db = loss_db_from_transmissivity(model.direct->b.transmissivity);
    out.a.noise.direct = (1.0 - model.direct->a.transmissivity) * model.direct->a.bath_photons;
    out.b.noise.direct = (1.0 - model.direct->b.transmissivity) * model.direct->b.bath_photons;
    return out;
  }

  validate(model);
  const double f_a = mode_frequency_hz(model, Mode::A), f_b = mode_frequency_hz(model, Mode::B);
  if (model.geometry == Geometry::one_way) {
    out.b = travel(model, f_b, distance_m);  // mode a stays home: identity channel, no loss
  } else {
    out.a = travel(model, f_a, 0.5 * distance_m);
    out.b = f_b == f_a ? out.a : travel(model, f_b, 0.5 * distance_m);
  }
  return out;
}

}  // namespace heraldry::link
