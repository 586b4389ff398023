// Specific attenuation of the clear atmosphere (ITU-R P.676-13, Annex 1, section 1) and of rain
// (ITU-R P.838-3).

#include <cmath>
#include <numbers>

#include "heraldry/common.hpp"
#include "heraldry/link.hpp"
#include "link/input_checks.hpp"
#include "link/itu_tables.hpp"

namespace heraldry::link {

namespace {

// Line shape factor F_i of P.676-13 Annex 1, with interference correction delta:
// F = f/f0 [ (df - delta (f0 - f)) / ((f0 - f)^2 + df^2) + (df - delta (f0 + f)) / ((f0 + f)^2 +
// df^2) ] (all in GHz; delta dimensionless).
double line_shape(double f, double f0, double width, double delta) {
  const double below = f0 - f, above = f0 + f, w2 = width * width;
  return f / f0 *
         ((width - delta * below) / (below * below + w2) +
          (width - delta * above) / (above * above + w2));
}

void require_range(const char* key, double value, bool ok, const char* expected,
                   const char* hint = "") {
  detail::require(ok, key, value, expected, hint);
}

}  // namespace

// P.676-13 Annex 1, with theta = 300 / T, p the dry-air and e the water-vapour pressure (hPa):
//   gamma = 0.1820 f [N''_Oxygen(f) + N''_WaterVapour(f)]   (dB/km, f in GHz)
//   N''_Oxygen = sum_i S_i F_i + N''_D(f),  N''_WaterVapour = sum_i S_i F_i
//   oxygen: S = a1 1e-7 p theta^3 exp[a2 (1 - theta)]
//           df = a3 1e-4 (p theta^(0.8 - a4) + 1.1 e theta)
//           df = sqrt(df^2 + 2.25e-6)            (Zeeman splitting of oxygen lines)
//           delta = (a5 + a6 theta) 1e-4 (p + e) theta^0.8
//   water:  S = b1 1e-1 e theta^3.5 exp[b2 (1 - theta)]
//           df = b3 1e-4 (p theta^b4 + b5 e theta^b6)
//           df = 0.535 df + sqrt(0.217 df^2 + 2.1316e-12 f0^2 / theta)  (Doppler)
//           delta = 0
//   dry continuum: N''_D = f p theta^2 [6.14e-5 / (d (1 + (f/d)^2))
//                                       + 1.4e-12 p theta^1.5 / (1 + 1.9e-5 f^1.5)]
//           d = 5.6e-4 (p + e) theta^0.8  (width parameter of the Debye spectrum)
// The factors 1e-7, 1e-1 and 1e-4 are the Recommendation's scalings of the tabulated a1, b1 and
// a3, a5, a6, b3 (units in the CSV headers of data/itu).
GasAttenuation gaseous_attenuation(double f, double p, double e, double temperature_k) {
  require_range("frequency_ghz", f, f >= 1.0 && f <= 1000.0,
                "a frequency within 1-1000 GHz (the range of ITU-R P.676-13 Annex 1)",
                "use the fixed attenuation model outside it");
  require_range("dry_pressure_hpa", p, p >= 0.0 && std::isfinite(p), "a pressure >= 0 hPa");
  require_range("vapour_pressure_hpa", e, e >= 0.0 && std::isfinite(e), "a pressure >= 0 hPa");
  require_range("temperature_k", temperature_k, temperature_k > 0.0 && std::isfinite(temperature_k),
                "a temperature > 0 K");

  const double theta = 300.0 / temperature_k;
  const double theta08 = std::pow(theta, 0.8);

  double n_oxygen = 0.0;
  for (const auto& l : detail::oxygen_lines()) {
    const double strength =
        l.a1 * 1e-7 * p * theta * theta * theta * std::exp(l.a2 * (1.0 - theta));
    double width = l.a3 * 1e-4 * (p * std::pow(theta, 0.8 - l.a4) + 1.1 * e * theta);
    width = std::sqrt(width * width + 2.25e-6);
    const double delta = (l.a5 + l.a6 * theta) * 1e-4 * (p + e) * theta08;
    n_oxygen += strength * line_shape(f, l.f0, width, delta);
  }
  const double d = 5.6e-4 * (p + e) * theta08;
  const double n_dry = f * p * theta * theta *
                       (6.14e-5 / (d * (1.0 + (f / d) * (f / d))) +
                        1.4e-12 * p * std::pow(theta, 1.5) / (1.0 + 1.9e-5 * std::pow(f, 1.5)));

  double n_water = 0.0;
  for (const auto& l : detail::water_lines()) {
    const double strength = l.b1 * 1e-1 * e * std::pow(theta, 3.5) * std::exp(l.b2 * (1.0 - theta));
    double width = l.b3 * 1e-4 * (p * std::pow(theta, l.b4) + l.b5 * e * std::pow(theta, l.b6));
    width = 0.535 * width + std::sqrt(0.217 * width * width + 2.1316e-12 * l.f0 * l.f0 / theta);
    n_water += strength * line_shape(f, l.f0, width, 0.0);
  }

  // With p = 0 the dry continuum is 0 (d -> 0 only when p + e = 0: then there is no gas at all).
  const double dry = (p + e) > 0.0 ? n_dry : 0.0;
  return {0.1820 * f * (n_oxygen + dry), 0.1820 * f * n_water};
}

double vapour_pressure_hpa(double water_vapour_gm3, double temperature_k) {
  return water_vapour_gm3 * temperature_k / 216.7;
}

// P.838-3: log10 k = sum_{j=1}^{4} a_j exp[-((log10 f - b_j)/c_j)^2] + m_k log10 f + c_k  (Eq. 2)
//          alpha   = sum_{j=1}^{5} a_j exp[-((log10 f - b_j)/c_j)^2] + m_a log10 f + c_a  (Eq. 3)
RainCoefficients rain_coefficients_horizontal(double frequency_ghz) {
  require_range("frequency_ghz", frequency_ghz, frequency_ghz >= 1.0 && frequency_ghz <= 1000.0,
                "a frequency within 1-1000 GHz (the range of ITU-R P.838-3)");
  const auto& t = detail::rain_tables();
  return {std::pow(10.0, t.log10_k_h(frequency_ghz)), t.alpha_h(frequency_ghz)};
}

RainCoefficients rain_coefficients_vertical(double frequency_ghz) {
  require_range("frequency_ghz", frequency_ghz, frequency_ghz >= 1.0 && frequency_ghz <= 1000.0,
                "a frequency within 1-1000 GHz (the range of ITU-R P.838-3)");
  const auto& t = detail::rain_tables();
  return {std::pow(10.0, t.log10_k_v(frequency_ghz)), t.alpha_v(frequency_ghz)};
}

// P.838-3, Eqs. (4) and (5):
//   k     = [k_H + k_V + (k_H - k_V) cos^2(theta) cos(2 tau)] / 2
//   alpha = [k_H alpha_H + k_V alpha_V + (k_H alpha_H - k_V alpha_V) cos^2(theta) cos(2 tau)] / (2
//   k)
RainCoefficients rain_coefficients(double frequency_ghz, double elevation_rad, double tilt_rad) {
  const auto h = rain_coefficients_horizontal(frequency_ghz);
  const auto v = rain_coefficients_vertical(frequency_ghz);
  const double ce = std::cos(elevation_rad);
  const double w = ce * ce * std::cos(2.0 * tilt_rad);
  const double k = 0.5 * (h.k + v.k + (h.k - v.k) * w);
  const double ka = 0.5 * (h.k * h.alpha + v.k * v.alpha + (h.k * h.alpha - v.k * v.alpha) * w);
  return {k, ka / k};
}

double rain_attenuation(double frequency_ghz, double rain_mm_per_h, double elevation_rad,
                        double tilt_rad) {
  require_range("rain_mm_per_h", rain_mm_per_h,
                rain_mm_per_h >= 0.0 && std::isfinite(rain_mm_per_h), "a rain rate >= 0 mm/h");
  if (rain_mm_per_h == 0.0) return 0.0;
  const auto c = rain_coefficients(frequency_ghz, elevation_rad, tilt_rad);
  return c.k * std::pow(rain_mm_per_h, c.alpha);  // P.838-3, Eq. (1)
}

double per_metre_from_db_per_km(double db_per_km) {
  return db_per_km * std::numbers::ln10 / 10.0 / 1000.0;
}

}  // namespace heraldry::link
