// Link model: how each mode of the pair reaches its receiver, as one thermal-loss channel
// (transmissivity, bath photons) per mode. Physics only; SI units inside.
#pragma once

#include <optional>

namespace heraldry::link {

/// Exact SI (2019) constants (BIPM, 26th CGPM, 2018).
inline constexpr double planck_h = 6.62607015e-34;     // J s
inline constexpr double boltzmann_k = 1.380649e-23;    // J / K
inline constexpr double speed_of_light = 299792458.0;  // m / s

/// A phase-insensitive thermal-loss channel: beam splitter of transmissivity tau mixing the mode
/// with a thermal environment of mean occupation n_E. On the covariance matrix of the mode
/// (shot-noise units): V -> tau V + (1 - tau)(2 n_E + 1) I.
struct Channel {
  double transmissivity = 1.0;
  double bath_photons = 0.0;
};

/// `first` followed by `second`, as one channel (PHYSICS.md §2.2):
/// tau = tau1 tau2, n = [tau2 (1 - tau1) n1 + (1 - tau2) n2] / (1 - tau1 tau2).
/// Two identity channels (tau1 = tau2 = 1) compose to the identity {1, 0}.
Channel compose(const Channel& first, const Channel& second);

/// Mean thermal occupation n(f, T) = 1 / (exp(h f / k_B T) - 1) (Planck), with expm1.
/// T = 0 gives 0. Throws InputError for f <= 0 or T < 0.
double planck_occupation(double frequency_hz, double temperature_k);

// ---------------------------------------------------------------- ITU-R P.676-13 (gases)

struct GasAttenuation {
  double oxygen_db_per_km = 0.0;          // gamma_o (dry air: oxygen lines + dry continuum)
  double water_vapour_db_per_km = 0.0;    // gamma_w
  double total() const { return oxygen_db_per_km + water_vapour_db_per_km; }
};

/// Specific attenuation of dry air and water vapour, ITU-R P.676-13 Annex 1 (line-by-line sum
/// over the 44 oxygen and 35 water-vapour lines of Tables 1 and 2, plus the dry continuum).
/// dry_pressure_hpa: dry-air pressure p; vapour_pressure_hpa: e; temperature in kelvin.
/// Valid for 1-1000 GHz (the Recommendation's range): outside it, and for p < 0, e < 0 or T <= 0,
/// throws InputError.
GasAttenuation gaseous_attenuation(double frequency_ghz, double dry_pressure_hpa,
                                   double vapour_pressure_hpa, double temperature_k);

/// Water-vapour partial pressure e = rho T / 216.7 (ITU-R P.676-13 Annex 1, Eq. 4), hPa.
double vapour_pressure_hpa(double water_vapour_gm3, double temperature_k);

// ---------------------------------------------------------------- ITU-R P.838-3 (rain)

struct RainCoefficients {
  double k = 0.0;
  double alpha = 0.0;
};

/// k_H, alpha_H (horizontal) or k_V, alpha_V (vertical) from the regression of ITU-R P.838-3
/// (k in dB/km per (mm/h)^alpha). Valid for 1-1000 GHz; throws InputError outside.
RainCoefficients rain_coefficients_horizontal(double frequency_ghz);
RainCoefficients rain_coefficients_vertical(double frequency_ghz);
/// Combined for path elevation theta and polarisation tilt tau (P.838-3, Eqs. 4 and 5).
RainCoefficients rain_coefficients(double frequency_ghz, double elevation_rad, double tilt_rad);
/// gamma_R = k R^alpha, dB/km (P.838-3, Eq. 1); R = 0 gives 0 at any frequency.
double rain_attenuation(double frequency_ghz, double rain_mm_per_h, double elevation_rad = 0.0,
                        double tilt_rad = 0.0);

/// Power attenuation coefficient mu (1/m) from dB/km: mu = gamma ln(10)/10 / 1000.
double per_metre_from_db_per_km(double db_per_km);

// ---------------------------------------------------------------- beam coupling

/// Power transmission between two apertures with effective areas At, Ar (m^2) at distance d:
/// Goubau's formula T = 1 - exp(-tau^2), tau = sqrt(At Ar) / (lambda d). Far field: Friis.
/// d = 0 gives 1 (0 if an area is 0). Throws InputError for negative areas or distance, or
/// lambda <= 0.
double beam_coupling(double area_t_m2, double area_r_m2, double wavelength_m, double distance_m);
/// Friis transmission At Ar / (lambda d)^2 (may exceed 1 in the near field: use beam_coupling).
/// Requires d > 0 (throws InputError otherwise).
double friis_coupling(double area_t_m2, double area_r_m2, double wavelength_m, double distance_m);

// ---------------------------------------------------------------- the link model

enum class Medium { air, line };
enum class Geometry { one_way, midpoint };
enum class AirModel { itu, fixed };

struct Antenna {
  double diameter_m = 0.6;
  double aperture_efficiency = 0.7;
  double interface_loss = 0.0;             // power fraction lost at the cryostat/air interface, per antenna
  double interface_temperature_k = 4.0;    // temperature of what couples in at the interface
};

struct Air {
  AirModel model = AirModel::itu;
  double temperature_k = 288.15;
  double pressure_hpa = 1013.25;           // barometric (total) pressure; dry p = total - e
  double water_vapour_gm3 = 7.5;
  double rain_mm_per_h = 0.0;
  double fixed_db_per_km = 0.0;            // gases, for model = fixed (rain still added)
};

struct Line {
  double loss_db_per_m = 0.005;
  double temperature_k = 0.05;
};

struct DirectChannels {
  Channel a;
  Channel b;
};

struct LinkModel {
  double frequency_hz = 5.0e9;
  Medium medium = Medium::air;
  Geometry geometry = Geometry::one_way;
  std::optional<Antenna> antenna;          // without it: no beam spreading, no interface loss
  Air air;
  Line line;
  std::optional<DirectChannels> direct;    // measured channels replace the model
};

/// Loss of one mode's path, by cause, in dB (>= 0). The causes compose by multiplying
/// transmissivities, so total_db() = -10 log10(channel.transmissivity).
struct LossBreakdown {
  double beam_db = 0.0;       // beam spreading between the two dishes (Goubau)
  double air_db = 0.0;        // gases (ITU-R P.676 or the fixed dB/km)
  double rain_db = 0.0;       // rain (ITU-R P.838)
  double interface_db = 0.0;  // both cryostat/air interfaces of the path together
  double line_db = 0.0;       // cryogenic line
  double direct_db = 0.0;     // measured channel given directly: its whole loss, cause unknown
  double total_db() const {
    return beam_db + air_db + rain_db + interface_db + line_db + direct_db;
  }
};

struct ModeBudget {
  Channel channel;          // the composed channel of the whole path
  LossBreakdown loss;
};

struct LinkBudget {
  double distance_m = 0.0;
  ModeBudget a;
  ModeBudget b;
};

/// The per-mode channels at a distance (source-to-receiver separation for one-way, receiver-to-
/// receiver for midpoint: each mode travels distance/2). The rules:
///
/// - `direct` set: its channels are returned unchanged whatever the distance; each mode's loss
///   -10 log10(tau) goes to `direct_db` (the other causes stay 0).
/// - Geometry: one_way sends mode b over L = distance and leaves mode a with the identity channel
///   (tau = 1, n = 0, no loss); midpoint sends each of a and b over L = distance/2 through its own
///   copy of the path (source in the middle, a receiver at each end; with antennas, each mode has
///   its own transmit and receive dish, so both modes see two interfaces).
/// - medium = line: tau = 10^(-loss_db_per_m L / 10), bath n = planck(f, line.temperature_k);
///   the antenna and the air are ignored.
/// - medium = air: the travelling mode passes, in this order,
///     1. transmit interface: tau = 1 - interface_loss, n = planck(f, interface_temperature_k);
///     2. beam coupling between two identical dishes at separation L: tau = beam_coupling(A, A,
///        c/f, L), A = aperture_efficiency pi (diameter/2)^2, n = planck(f, air temperature);
///     3. gases: tau = exp(-mu L), mu from gaseous_attenuation(f, p - e, e, T) with
///        e = vapour_pressure_hpa(water_vapour_gm3, T) and p = pressure_hpa the barometric (total)
///        pressure, or mu from fixed_db_per_km for model = fixed; n = planck(f, air temperature);
///     4. rain: ITU-R P.838-3 for a horizontal path (elevation 0) and horizontal polarisation
///        (tilt 0), n = planck(f, air temperature); skipped when rain_mm_per_h = 0;
///     5. receive interface, as the transmit one.
///   Without an antenna steps 1, 2 and 5 are absent (no beam spreading, no interfaces).
///   The mode's channel is the composition (compose) of these in order.
/// Throws InputError (file empty, line 0, key = the LinkModel field) for a negative distance or a
/// parameter outside its physical range.
LinkBudget link_budget(const LinkModel& model, double distance_m);

}  // namespace heraldry::link
