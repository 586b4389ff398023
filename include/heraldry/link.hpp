// Link model: how each mode of the pair reaches its receiver, as one thermal-loss channel
// (transmissivity, bath photons) per mode. Physics only; SI units inside.
#pragma once

#include <optional>
#include <string>

#include "heraldry/common.hpp"

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

/// `first` followed by `second`, as one channel (docs/physics.md §2.2):
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

/// One antenna (one end of an open-air path) and the cryostat/air interface behind it.
///
/// The fields of the original model keep their meaning and defaults: `aperture_efficiency` is the
/// taper (illumination) efficiency, the part of the handbook aperture efficiency that only shapes
/// the beam (it scales the effective area in Goubau's formula and is never a loss);
/// `interface_loss` is the loss of the cryostat/air transition at `interface_temperature_k`.
/// The other factors of the aperture efficiency that take power out of the mode are stages of
/// their own, each a beam splitter with a thermal port (link_budget gives the order):
///   - spillover: the part of the feed pattern that misses the aperture; it leaves into, and
///     takes noise from, the surroundings at spillover_temperature_k (default: the air's);
///   - ohmic: absorption in feed, reflector and radome, noise at the antenna's physical
///     temperature physical_temperature_k (default: the air's);
///   - mismatch: the power fraction |Gamma|^2 reflected at the feed port; the wave reflected
///     into the mode's direction comes from the cold side, at mismatch_temperature_k (default:
///     interface_temperature_k). At a receiver that is the wave leaving the cold stage towards
///     the feed. At a transmitter it is the wave travelling inwards through the feed: in a link
///     that keeps entanglement that is the receiver's cold emission after the same, nearly
///     lossless path backwards (occupation below one photon), so the cold-side temperature is the
///     consistent first-order choice; set the field higher for a transmitter that sees the room.
///     Multiple reflections between the two ends (standing waves) are left out.
/// All losses are power fractions in [0, 1); zero (the default) removes the stage exactly.
struct Antenna {
  double diameter_m = 0.6;
  double aperture_efficiency = 0.7;        // taper efficiency: scales the area in Goubau's formula
  double interface_loss = 0.0;             // power fraction lost at the cryostat/air interface, per antenna
  double interface_temperature_k = 4.0;    // temperature of what couples in at the interface
  double spillover_loss = 0.0;             // power fraction of the feed pattern missing the aperture
  std::optional<double> spillover_temperature_k = std::nullopt;  // surroundings; default air
  double ohmic_loss = 0.0;                 // power fraction absorbed in feed, reflector, radome
  std::optional<double> physical_temperature_k = std::nullopt;   // the antenna's; default air
  double mismatch_loss = 0.0;              // |Gamma|^2, power fraction reflected at the feed port
  std::optional<double> mismatch_temperature_k = std::nullopt;   // default interface temperature
};

/// Lost power fraction of a loss given in dB: 1 - 10^(-dB/10), formed with expm1 (closed form).
double lost_fraction_from_db(double loss_db);
/// Reflected power fraction |Gamma|^2 = 10^(-RL/10) of a return loss RL in dB (closed form;
/// 20 dB -> 0.01, VSWR ~1.22).
double reflected_fraction_from_return_loss_db(double return_loss_db);

/// Typical magnitudes of the losses an ideal antenna leaves out, for a caution line. The
/// spillover and the ohmic loss couple to the room: at these magnitudes either one alone exceeds
/// the ~1/(n + 1) ~ 8e-4 of loss to a 300 K bath at 5 GHz that one-way entanglement tolerates.
///   - spillover: common practice; vendor application notes quote spillover efficiencies of
///     85-95 % for focus-fed dishes at the usual -10 to -12 dB edge taper, i.e. a loss of
///     5-15 %, "a few percent" for a good feed;
///   - ohmic: ~0.1 dB for feed, reflector and radome at room temperature (from memory);
///   - mismatch: 20 dB return loss (VSWR 1.22, 1 % reflected) is a common feed specification
///     (from memory); vendor notes quote 0.05-0.2 dB of mismatch loss for a feed.
/// The factorisation of an aperture antenna's efficiency into beam coupling, transmission
/// spillover and reception spillover, which the stages follow, is that of Nagai, Imada &
/// Okumura, arXiv:2003.05544 (2020).
struct TypicalAntennaLosses {
  double spillover_loss = 0.05;
  double ohmic_loss_db = 0.1;
  double return_loss_db = 20.0;
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
  /// A nondegenerate source puts its two modes at different frequencies: each set one replaces
  /// frequency_hz for its mode (Planck occupations, gases, rain and beam coupling of that mode).
  std::optional<double> frequency_a_hz = std::nullopt;
  std::optional<double> frequency_b_hz = std::nullopt;
  Medium medium = Medium::air;
  Geometry geometry = Geometry::one_way;
  std::optional<Antenna> antenna;          // without it: no beam spreading, no interface loss
  /// Per-end overrides of `antenna`: the source side transmits, the receiver side receives (in
  /// the midpoint geometry both arms use the same pair). An end without an override uses
  /// `antenna`; an antenna at one end only is an input error.
  std::optional<Antenna> source_antenna = std::nullopt;
  std::optional<Antenna> receiver_antenna = std::nullopt;
  Air air;
  Line line;
  std::optional<DirectChannels> direct;    // measured channels replace the model
};

/// The frequency of one mode: frequency_a_hz / frequency_b_hz when set, frequency_hz otherwise.
double mode_frequency_hz(const LinkModel& model, Mode mode);

/// The antennas of the two ends of an open-air path.
struct AntennaPair {
  Antenna source;    // transmits (next to the source)
  Antenna receiver;  // receives (next to the receiver)
};

/// The pair after the per-end overrides; nullopt without any antenna. Throws InputError
/// (key link.source_antenna or link.receiver_antenna, the end that has none) when only one
/// end has an antenna.
std::optional<AntennaPair> antenna_pair(const LinkModel& model);

/// True for an open-air model (medium air, no direct channels) whose antennas, if any, have
/// zero spillover, ohmic and mismatch loss at both ends: Goubau's best case. A caller shows
/// ideal_antenna_caution() then. (Without antennas even the beam spreading is left out.) Throws
/// InputError as antenna_pair does for an antenna at one end only.
bool uses_ideal_antennas(const LinkModel& model);
/// The caution line for such a model, with the typical magnitudes (TypicalAntennaLosses).
std::string ideal_antenna_caution();

/// Loss of one mode's path, by cause, in dB (>= 0). The causes compose by multiplying
/// transmissivities, so total_db() = -10 log10(channel.transmissivity).
struct LossBreakdown {
  double beam_db = 0.0;       // beam spreading between the two dishes (Goubau)
  double air_db = 0.0;        // gases (ITU-R P.676 or the fixed dB/km)
  double rain_db = 0.0;       // rain (ITU-R P.838)
  double interface_db = 0.0;  // both cryostat/air interfaces of the path together
  double line_db = 0.0;       // cryogenic line
  double direct_db = 0.0;     // measured channel given directly: its whole loss, cause unknown
  double spillover_db = 0.0;  // spillover of both antennas of the path together
  double ohmic_db = 0.0;      // ohmic loss of both antennas
  double mismatch_db = 0.0;   // mismatch of both antennas
  double total_db() const {
    return beam_db + air_db + rain_db + interface_db + line_db + direct_db + spillover_db +
           ohmic_db + mismatch_db;
  }
};

/// Thermal photons each cause adds to the mode, counted at the receiver. A stage i of
/// transmissivity tau_i and bath n_i puts (1 - tau_i) n_i photons into the mode; the stages after
/// it attenuate them like the signal, so stage i contributes (1 - tau_i) n_i prod_{j > i} tau_j.
/// The contributions of all stages add up to the noise of the composed channel,
/// total() = (1 - tau) n_E, the mean photon number the path adds to the mode (n_out = tau n_in +
/// (1 - tau) n_E): closed form, by induction on compose. A cause with several stages (the two
/// interfaces, the two spillovers, ...) sums them.
struct AddedPhotons {
  double beam = 0.0;
  double air = 0.0;
  double rain = 0.0;
  double interface = 0.0;
  double line = 0.0;
  double direct = 0.0;        // (1 - tau) n_E of a measured channel
  double spillover = 0.0;
  double ohmic = 0.0;
  double mismatch = 0.0;
  double total() const {
    return beam + air + rain + interface + line + direct + spillover + ohmic + mismatch;
  }
};

struct ModeBudget {
  Channel channel;          // the composed channel of the whole path
  LossBreakdown loss;
  AddedPhotons noise;       // the thermal photons of each cause at the receiver
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
///   -10 log10(tau) goes to `direct_db` (the other causes stay 0), its noise (1 - tau) n_E to
///   `noise.direct`.
/// - Geometry: one_way sends mode b over L = distance and leaves mode a with the identity channel
///   (tau = 1, n = 0, no loss); midpoint sends each of a and b over L = distance/2 through its own
///   copy of the path (source in the middle, a receiver at each end; with antennas, each mode has
///   its own transmit and receive dish, so both modes see two interfaces). Each mode uses its own
///   frequency f (mode_frequency_hz) in every stage below.
/// - medium = line: tau = 10^(-loss_db_per_m L / 10), bath n = planck(f, line.temperature_k);
///   the antenna and the air are ignored.
/// - medium = air: the travelling mode passes, in this order (S = the source-side antenna,
///   R = the receiver-side one, antenna_pair),
///     1. S interface: tau = 1 - interface_loss, n = planck(f, interface_temperature_k);
///     2. S mismatch: tau = 1 - mismatch_loss, n = planck(f, mismatch temperature);
///     3. S ohmic: tau = 1 - ohmic_loss, n = planck(f, physical temperature);
///     4. S spillover: tau = 1 - spillover_loss, n = planck(f, spillover temperature);
///     5. beam coupling between the two apertures at separation L: tau = beam_coupling(A_S, A_R,
///        c/f, L), A = aperture_efficiency pi (diameter/2)^2, n = planck(f, air temperature);
///     6. gases: tau = exp(-mu L), mu from gaseous_attenuation(f, p - e, e, T) with
///        e = vapour_pressure_hpa(water_vapour_gm3, T) and p = pressure_hpa the barometric (total)
///        pressure, or mu from fixed_db_per_km for model = fixed; n = planck(f, air temperature);
///     7. rain: ITU-R P.838-3 for a horizontal path (elevation 0) and horizontal polarisation
///        (tilt 0), n = planck(f, air temperature); skipped when rain_mm_per_h = 0;
///     8.-11. R spillover, R ohmic, R mismatch, R interface (the mirror image of 4.-1.).
///   The order follows the hardware from the cold side outwards: the interface is the cryostat's
///   transition, the mismatch sits at the feed port, the ohmic loss in the feed and reflector
///   (and radome), the spillover where the feed pattern meets the aperture. Stages 2-4 and 8-10
///   with zero loss are left out (so ideal antennas reproduce the original model bit for bit).
///   Without an antenna stages 1-5 and 8-11 are absent (no beam spreading, no interfaces).
///   The mode's channel is the composition (compose) of these in order.
/// Throws InputError (file empty, line 0, key = the LinkModel field) for a negative distance or a
/// parameter outside its physical range.
LinkBudget link_budget(const LinkModel& model, double distance_m);

}  // namespace heraldry::link
