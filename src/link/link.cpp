#include "heraldry/link.hpp"

#include <cmath>
#include <limits>
#include <numbers>
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

namespace {

// One cause of loss on the path: its channel, its loss in dB (formed from the cause's own
// parameters, not from the rounded transmissivity, so that small losses keep full relative
// precision) and the breakdown field it is booked to.
struct Stage {
  Channel channel;
  double loss_db;
  double LossBreakdown::*field;
};

// -10 log10(1 - x) for a lost power fraction x, accurate for small x.
double db_of_lost_fraction(double x) { return -10.0 / std::numbers::ln10 * std::log1p(-x); }

ModeBudget run_path(const Stage* stages, std::size_t count) {
  ModeBudget out;
  for (std::size_t i = 0; i < count; ++i) {
    out.channel = compose(out.channel, stages[i].channel);
    out.loss.*stages[i].field += stages[i].loss_db;
  }
  return out;
}

void validate_channel(const Channel& c, const char* key) {
  const std::string k(key);
  require(std::isfinite(c.transmissivity) && c.transmissivity > 0.0 && c.transmissivity <= 1.0,
          k + ".transmissivity", c.transmissivity, "a transmissivity in (0, 1]");
  require(finite_nonnegative(c.bath_photons), k + ".bath_photons", c.bath_photons,
          "a mean photon number >= 0");
}

void validate(const LinkModel& m) {
  require(std::isfinite(m.frequency_hz) && m.frequency_hz > 0.0, "link.frequency_hz",
          m.frequency_hz, "a frequency > 0 Hz");
  if (m.medium == Medium::line) {
    require(finite_nonnegative(m.line.loss_db_per_m), "link.line.loss_db_per_m",
            m.line.loss_db_per_m, "a loss >= 0 dB/m");
    require(finite_nonnegative(m.line.temperature_k), "link.line.temperature_k",
            m.line.temperature_k, "a temperature >= 0 K");
    return;
  }
  if (m.antenna) {
    const Antenna& a = *m.antenna;
    require(std::isfinite(a.diameter_m) && a.diameter_m > 0.0, "link.antenna.diameter_m",
            a.diameter_m, "a diameter > 0 m");
    require(std::isfinite(a.aperture_efficiency) && a.aperture_efficiency > 0.0 &&
                a.aperture_efficiency <= 1.0,
            "link.antenna.aperture_efficiency", a.aperture_efficiency, "an efficiency in (0, 1]");
    require(std::isfinite(a.interface_loss) && a.interface_loss >= 0.0 && a.interface_loss < 1.0,
            "link.antenna.interface_loss", a.interface_loss, "a power fraction in [0, 1)");
    require(finite_nonnegative(a.interface_temperature_k), "link.antenna.interface_temperature_k",
            a.interface_temperature_k, "a temperature >= 0 K");
  }
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

// The path of one travelling mode over `length` metres (see link_budget in link.hpp).
ModeBudget travel(const LinkModel& m, double length) {
  const double f = m.frequency_hz;
  if (m.medium == Medium::line) {
    const double db = m.line.loss_db_per_m * length;
    const Stage s{{transmissivity_from_db(db), planck_occupation(f, m.line.temperature_k)},
                  db,
                  &LossBreakdown::line_db};
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

  Stage stages[5];
  std::size_t count = 0;
  Stage port{};
  if (m.antenna) {
    const Antenna& a = *m.antenna;
    port = {{1.0 - a.interface_loss, planck_occupation(f, a.interface_temperature_k)},
            db_of_lost_fraction(a.interface_loss),
            &LossBreakdown::interface_db};
    stages[count++] = port;
    const double radius = 0.5 * a.diameter_m;
    const double area = a.aperture_efficiency * std::numbers::pi * radius * radius;
    const double lambda = speed_of_light / f;
    const double beam = beam_coupling(area, area, lambda, length);
    // The lost fraction is exp(-tau^2) (Goubau): formed directly, the near-field dB keeps its
    // precision where beam rounds to 1.
    const double tau =
        length > 0.0 ? area / (lambda * length) : std::numeric_limits<double>::infinity();
    const double lost = std::exp(-tau * tau);
    const double beam_db =
        lost < 0.5 ? db_of_lost_fraction(lost) : loss_db_from_transmissivity(beam);
    stages[count++] = {{beam, n_air}, beam_db, &LossBreakdown::beam_db};
  }
  const double gas_db = gas_db_per_km * length / 1000.0;
  stages[count++] = {{std::exp(-per_metre_from_db_per_km(gas_db_per_km) * length), n_air},
                     gas_db,
                     &LossBreakdown::air_db};
  const double rain_db = rain_db_per_km * length / 1000.0;
  stages[count++] = {{std::exp(-per_metre_from_db_per_km(rain_db_per_km) * length), n_air},
                     rain_db,
                     &LossBreakdown::rain_db};
  if (m.antenna) stages[count++] = port;
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
    return out;
  }

  validate(model);
  if (model.geometry == Geometry::one_way) {
    out.b = travel(model, distance_m);  // mode a stays home: identity channel, no loss
  } else {
    out.a = travel(model, 0.5 * distance_m);
    out.b = out.a;
  }
  return out;
}

}  // namespace heraldry::link
