// Link model: Planck occupations, ITU-R gaseous and rain attenuation, beam coupling, channel
// composition and the per-mode link budget. Each check names the source of its expected value.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "heraldry/common.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/link.hpp"
#include "link/itu_tables.hpp"

using namespace heraldry;
using namespace heraldry::link;

namespace {

constexpr double pi = 3.14159265358979323846;
double radians(double degrees) { return degrees * pi / 180.0; }

// |computed - printed| within half a unit of the last printed digit ("to the printed digits").
// |computed - expected| <= rel * max(|computed|, |expected|).
void check_rel(double computed, double expected, double rel) {
  INFO("computed " << computed << ", expected " << expected << ", relative tolerance " << rel);
  CHECK(std::abs(computed - expected) <= rel * std::max(std::abs(computed), std::abs(expected)));
}

// Within half a unit of the last of `digits` printed significant digits.
void check_significant(double computed, double printed, int digits) {
  const double unit = std::pow(10.0, std::floor(std::log10(std::abs(printed))) - (digits - 1));
  INFO("computed " << computed << ", printed " << printed << " (" << digits << " digits)");
  CHECK(std::abs(computed - printed) <= 0.5 * unit);
}

void check_printed(double computed, double printed, int decimals) {
  const double half_unit = 0.5 * std::pow(10.0, -decimals);
  INFO("computed " << computed << ", printed " << printed << " (" << decimals << " decimals)");
  CHECK(std::abs(computed - printed) <= half_unit);
}

// The scenario of the distance table: 5 GHz, 300 K air, a fixed 0.00871 dB/km, no antenna.
LinkModel distance_table_model(Geometry geometry) {
  LinkModel m;
  m.frequency_hz = 5.0e9;
  m.medium = Medium::air;
  m.geometry = geometry;
  m.air.model = AirModel::fixed;
  m.air.fixed_db_per_km = 0.00871;
  m.air.temperature_k = 300.0;
  return m;
}

gaussian::StandardForm through_link(const gaussian::StandardForm& s, const LinkBudget& budget) {
  return gaussian::apply(gaussian::apply(s, Mode::A, budget.a.channel), Mode::B, budget.b.channel);
}

}  // namespace

// ------------------------------------------------------------------------------------ Planck

TEST_CASE("Planck occupation at 5 GHz and 300 K is 1249.697 photons") {
  // Closed form 1/(exp(hf/kT) - 1) with the SI-exact h and k_B (26th CGPM, 2018); common practice
  // quotes "about 1250" for 5 GHz at room temperature.
  check_printed(planck_occupation(5.0e9, 300.0), 1249.697, 3);
}

TEST_CASE("Planck occupations match the closed form with the SI-exact constants") {
  // Computed from the SI-exact h = 6.62607015e-34 J s, k_B = 1.380649e-23 J/K in the closed form
  // x = hf/(k_B T), n = 1/(e^x - 1) (values as tabulated in docs/physics.md §2.4, printed digits).
  struct Row {
    double f, t, x;
    int x_digits;
    double n;
    int n_digits;
  };
  const Row rows[] = {{5e9, 300.0, 7.998738e-4, 7, 1249.697, 7},
                      {5e9, 4.0, 5.999054e-2, 7, 16.1743, 6},
                      {5e9, 0.05, 4.799243, 7, 8.30437e-3, 6},
                      {5e9, 0.01, 23.99622, 7, 3.78945e-11, 6}};
  for (const auto& row : rows) {
    CAPTURE(row.t);
    check_significant(planck_h * row.f / (boltzmann_k * row.t), row.x, row.x_digits);
    check_significant(planck_occupation(row.f, row.t), row.n, row.n_digits);
  }
}

TEST_CASE("Planck occupation is zero at zero temperature and rejects unphysical input") {
  CHECK(planck_occupation(5e9, 0.0) == 0.0);   // closed form: T -> 0 limit
  CHECK(planck_occupation(5e9, 1e-6) == 0.0);  // exp(-240000) underflows
  CHECK_THROWS_AS(planck_occupation(5e9, -1.0), InputError);
  CHECK_THROWS_AS(planck_occupation(0.0, 300.0), InputError);
}

TEST_CASE("Planck occupation approaches the Rayleigh-Jeans limit kT/hf - 1/2 at high temperature") {
  // Closed form: 1/(e^x - 1) = 1/x - 1/2 + x/12 + O(x^3).
  const double f = 5e9, t = 3000.0;
  const double x = planck_h * f / (boltzmann_k * t);
  check_rel(planck_occupation(f, t), 1.0 / x - 0.5 + x / 12.0, 1e-12);
}

// ------------------------------------------------------------------------ ITU-R P.676 (gases)

TEST_CASE("Embedded ITU-R P.676-13 tables hold 44 oxygen and 35 water-vapour lines") {
  // ITU-R P.676-13 Annex 1, Tables 1 and 2: first and last line frequencies.
  const auto& ox = detail::oxygen_lines();
  const auto& wv = detail::water_lines();
  REQUIRE(ox.size() == 44);
  REQUIRE(wv.size() == 35);
  CHECK(ox.front().f0 == 50.474214);
  CHECK(ox.back().f0 == 834.145546);
  CHECK(wv.front().f0 == 22.235080);
  CHECK(wv.back().f0 == 1780.0);
  const auto& rain = detail::rain_tables();
  CHECK(rain.log10_k_h.terms.size() == 4);  // ITU-R P.838-3, Table 1
  CHECK(rain.alpha_v.terms.size() == 5);    // ITU-R P.838-3, Table 4
}

TEST_CASE("Gaseous attenuation reproduces the ITU-R P.676-13 validation examples") {
  // ITU-R P.676-13 validation examples: p = 1013.25 hPa (dry air), T = 288.15 K, rho = 7.5 g/m^3.
  const double t = 288.15;
  const double e = vapour_pressure_hpa(7.5, t);
  struct Row {
    double f, oxygen;
    int oxygen_decimals;
    double water;
    int water_decimals;
  };
  const Row rows[] = {{12.0, 0.00869826, 8, 0.00953539, 8},
                      {20.0, 0.01188355, 8, 0.09704730, 8},
                      {60.0, 14.6234748, 7, 0.15484184, 8},
                      {90.0, 0.03886971, 8, 0.34197339, 8}};
  for (const auto& row : rows) {
    CAPTURE(row.f);
    const auto g = gaseous_attenuation(row.f, 1013.25, e, t);
    check_printed(g.oxygen_db_per_km, row.oxygen, row.oxygen_decimals);
    check_printed(g.water_vapour_db_per_km, row.water, row.water_decimals);
  }
}

TEST_CASE("Gaseous attenuation at 5 GHz matches an independent line-by-line computation") {
  // Independent computation (numpy implementation of the same Recommendation, docs/physics.md §12.1,
  // printed to 5 significant digits): gamma_o = 0.0074004, gamma_w = 0.0013135 dB/km with
  // 1013.25 hPa as dry pressure, and a total of 0.00856 dB/km with 1013.25 hPa as total pressure.
  const double t = 288.15;
  const double e = vapour_pressure_hpa(7.5, t);
  const auto dry = gaseous_attenuation(5.0, 1013.25, e, t);
  check_printed(dry.oxygen_db_per_km, 0.0074004, 7);
  check_printed(dry.water_vapour_db_per_km, 0.0013135, 7);
  check_printed(gaseous_attenuation(5.0, 1013.25 - e, e, t).total(), 0.00856, 5);
}

TEST_CASE("Water-vapour pressure is rho T / 216.7") {
  // ITU-R P.676-13 Annex 1, Eq. 4 (closed form).
  check_rel(vapour_pressure_hpa(7.5, 288.15), 7.5 * 288.15 / 216.7, 1e-15);
}

TEST_CASE("Gaseous attenuation outside 1-1000 GHz or with negative pressure is an input error") {
  CHECK_THROWS_AS(gaseous_attenuation(0.5, 1013.25, 10.0, 288.15), InputError);
  CHECK_THROWS_AS(gaseous_attenuation(1200.0, 1013.25, 10.0, 288.15), InputError);
  CHECK_THROWS_AS(gaseous_attenuation(5.0, -1.0, 10.0, 288.15), InputError);
  CHECK_THROWS_AS(gaseous_attenuation(5.0, 1013.25, 10.0, 0.0), InputError);
}

TEST_CASE("A vacuum has no gaseous attenuation") {
  // Closed form: every line strength and the dry continuum are proportional to p or e.
  const auto g = gaseous_attenuation(60.0, 0.0, 0.0, 288.15);
  CHECK(g.oxygen_db_per_km == 0.0);
  CHECK(g.water_vapour_db_per_km == 0.0);
}

// ------------------------------------------------------------------------- ITU-R P.838 (rain)

TEST_CASE("Rain coefficients reproduce the ITU-R P.838-3 validation examples") {
  // ITU-R P.838-3 validation examples (polarisation tilt 0).
  const auto a = rain_coefficients(14.25, radians(31.07699124), 0.0);
  check_printed(a.k, 0.03975488, 8);
  check_printed(a.alpha, 1.12418043, 8);
  const auto b = rain_coefficients(29.0, radians(52.67898486), 0.0);
  check_printed(b.k, 0.21923716, 8);
  check_printed(b.alpha, 0.9464763, 7);
}

TEST_CASE("Rain coefficients reduce to the horizontal and vertical regressions") {
  // ITU-R P.838-3, Eqs. 4 and 5 in closed form: elevation 0 and tilt 0 give (k_H, alpha_H);
  // tilt 90 degrees gives (k_V, alpha_V); tilt 45 degrees gives k = (k_H + k_V)/2.
  for (double f : {1.0, 5.0, 29.0, 300.0}) {
    CAPTURE(f);
    const auto h = rain_coefficients_horizontal(f);
    const auto v = rain_coefficients_vertical(f);
    const auto ch = rain_coefficients(f, 0.0, 0.0);
    check_rel(ch.k, h.k, 1e-14);
    check_rel(ch.alpha, h.alpha, 1e-14);
    const auto cv = rain_coefficients(f, 0.0, pi / 2.0);
    check_rel(cv.k, v.k, 1e-12);
    check_rel(cv.alpha, v.alpha, 1e-12);
    const auto cc = rain_coefficients(f, 0.0, pi / 4.0);
    check_rel(cc.k, 0.5 * (h.k + v.k), 1e-12);
    check_rel(cc.alpha, (h.k * h.alpha + v.k * v.alpha) / (h.k + v.k), 1e-12);
  }
}

TEST_CASE("Rain attenuation is k R^alpha and zero without rain") {
  // ITU-R P.838-3, Eq. 1.
  const auto h = rain_coefficients_horizontal(5.0);
  check_rel(rain_attenuation(5.0, 25.0), h.k * std::pow(25.0, h.alpha), 1e-14);
  CHECK(rain_attenuation(5.0, 0.0) == 0.0);
  CHECK_THROWS_AS(rain_attenuation(5.0, -1.0), InputError);
}

TEST_CASE("dB per km converts to a power attenuation per metre by ln(10)/10/1000") {
  // Closed form; 0.00871 dB/km -> 2.005551616e-6 1/m and 0.00856 dB/km -> 1.971012840e-6 1/m.
  check_printed(per_metre_from_db_per_km(0.00871), 2.005551616e-6, 15);
  check_printed(per_metre_from_db_per_km(0.00856), 1.971012840e-6, 15);
  check_rel(std::exp(-per_metre_from_db_per_km(10.0) * 1000.0), 0.1, 1e-14);
}

// ----------------------------------------------------------------------------- beam coupling

TEST_CASE("Goubau coupling equals Friis in the far field") {
  // Closed form: 1 - exp(-tau^2) = tau^2 (1 - tau^2/2 + ...), so at tau = 1e-3 the two agree to
  // 5e-7 relative; Friis At Ar/(lambda d)^2 = tau^2.
  const double area = 0.2, lambda = 0.06;
  const double d = area / (lambda * 1e-3);  // tau = 1e-3
  const double goubau = beam_coupling(area, area, lambda, d);
  const double friis = friis_coupling(area, area, lambda, d);
  check_rel(friis, 1e-6, 1e-12);
  CHECK(std::abs(goubau / friis - 1.0) <= 1e-6);
  // Deep far field: T = tau^2 to round-off (no cancellation in 1 - exp(-tau^2)).
  check_rel(
      beam_coupling(area, area, lambda, d * 1e4) / friis_coupling(area, area, lambda, d * 1e4), 1.0,
      1e-12);
}

TEST_CASE("Goubau coupling tends to one in the near field and is one at zero distance") {
  // Closed form: tau = 10 gives 1 - e^-100, equal to 1 in double precision.
  const double area = 0.2, lambda = 0.06;
  CHECK(beam_coupling(area, area, lambda, area / (lambda * 10.0)) == 1.0);
  CHECK(beam_coupling(area, area, lambda, 0.0) == 1.0);
  CHECK(friis_coupling(area, area, lambda, area / (lambda * 10.0)) > 1.0);  // Friis overshoots
  CHECK_THROWS_AS(friis_coupling(area, area, lambda, 0.0), InputError);
  CHECK_THROWS_AS(beam_coupling(area, area, lambda, -1.0), InputError);
}

TEST_CASE("Goubau coupling at tau = 1 is 1 - 1/e") {
  // Closed form: T = 1 - exp(-1) = 0.63212055882855767.
  const double at = 0.3, ar = 0.12, lambda = 0.0555;
  const double d = std::sqrt(at * ar) / lambda;
  check_rel(beam_coupling(at, ar, lambda, d), 1.0 - std::exp(-1.0), 1e-14);
  check_rel(beam_coupling(at, ar, lambda, d), 0.63212055882855767, 1e-14);
}

// ------------------------------------------------------------------------------- composition

TEST_CASE("Two thermal-loss channels in sequence equal the composed channel") {
  // Closed form tau = tau1 tau2, n = [tau2 (1 - tau1) n1 + (1 - tau2) n2]/(1 - tau1 tau2);
  // example 0.9/0.01 then 0.95/1250 -> tau = 0.855, n = 431.0410344828 (docs/physics.md §2.2,
  // independent numpy check).
  const Channel first{0.9, 0.01}, second{0.95, 1250.0};
  const Channel both = compose(first, second);
  check_rel(both.transmissivity, 0.855, 1e-15);
  check_printed(both.bath_photons, 431.0410344828, 10);

  // Different algorithm: apply the two channels one after the other on the covariance matrix.
  const auto s = gaussian::tmst(0.7, 0.05);
  for (Mode mode : {Mode::A, Mode::B}) {
    const auto seq = gaussian::apply(gaussian::apply(s, mode, first), mode, second);
    const auto one = gaussian::apply(s, mode, both);
    check_rel(one.a, seq.a, 1e-13);
    check_rel(one.b, seq.b, 1e-13);
    check_rel(one.c, seq.c, 1e-13);
  }
}

TEST_CASE("Composition is associative, has the identity as unit, and identities give identity") {
  // Invariants of the closed form on a spread of channels.
  const Channel chans[] = {{0.3, 0.0}, {0.999, 1249.7}, {0.5, 2.0}, {1.0, 7.0}, {0.9, 0.01}};
  for (const auto& x : chans)
    for (const auto& y : chans)
      for (const auto& z : chans) {
        const auto l = compose(compose(x, y), z), r = compose(x, compose(y, z));
        check_rel(l.transmissivity, r.transmissivity, 1e-14);
        if (l.transmissivity < 1.0) check_rel(l.bath_photons, r.bath_photons, 1e-12);
      }
  const Channel id{1.0, 0.0}, x{0.7, 3.0};
  CHECK(compose(id, x).transmissivity == 0.7);
  check_rel(compose(id, x).bath_photons, 3.0, 1e-15);
  check_rel(compose(x, id).bath_photons, 3.0, 1e-15);
  CHECK(compose(id, id).transmissivity == 1.0);
  CHECK(compose(id, id).bath_photons == 0.0);
}

TEST_CASE(
    "One-sided thermal loss breaks entanglement at n_E = tau/(1-tau) whatever the squeezing") {
  // Closed form (docs/physics.md §2.5): a TMSV with thermal loss on one mode is entangled iff
  // n_E < tau/(1 - tau), i.e. tau > n_E/(n_E + 1), independent of r.
  for (double n_env : {1249.697, 1.0}) {
    const double tau_c = n_env / (n_env + 1.0);
    for (double r : {0.5, 1.0, 2.0}) {
      CAPTURE(n_env);
      CAPTURE(r);
      const auto s = gaussian::tmst(r, 0.0);
      const double above = 1.0 - (1.0 - tau_c) * (1.0 - 1e-4);
      const double below = 1.0 - (1.0 - tau_c) * (1.0 + 1e-4);
      CHECK(gaussian::log_negativity(gaussian::apply(s, Mode::B, {above, n_env})) > 0.0);
      CHECK(gaussian::log_negativity(gaussian::apply(s, Mode::B, {below, n_env})) == 0.0);
    }
  }
}

// ------------------------------------------------------------------- entanglement vs distance

TEST_CASE("Log-negativity and fidelity versus distance reproduce the tabulated values") {
  // TMST r = 1, n_th = 0.01; air at 300 K (n = 1249.697 at 5 GHz), fixed 0.00871 dB/km
  // (mu = 2.00555e-6 1/m, the table's "2.006e-6" rounded; with mu = 2.006e-6 exactly the
  // table is missed by up to 2.7e-4), no antenna. Table of docs/physics.md §2.6 (independent numpy
  // computation from the closed forms E_N = -log2 nu~_- and F = 2/(2 + a + b - 2c)), printed
  // with 6 decimals.
  struct Row {
    double l, en_asym, f_asym, en_sym, f_sym;
  };
  const Row rows[] = {{0, 2.856821, 0.878702, 2.856821, 0.878702},
                      {50, 1.936340, 0.791518, 1.924680, 0.791516},
                      {100, 1.394881, 0.720079, 1.363089, 0.720072},
                      {200, 0.723425, 0.609986, 0.645139, 0.609968},
                      {300, 0.295962, 0.529108, 0.167980, 0.529076}};
  const auto source = gaussian::tmst(1.0, 0.01);
  const auto one_way = distance_table_model(Geometry::one_way);
  const auto midpoint = distance_table_model(Geometry::midpoint);
  for (const auto& row : rows) {
    CAPTURE(row.l);
    const auto asym = through_link(source, link_budget(one_way, row.l));
    const auto sym = through_link(source, link_budget(midpoint, row.l));
    check_printed(gaussian::log_negativity(asym), row.en_asym, 6);
    check_printed(gaussian::fidelity(asym), row.f_asym, 6);
    check_printed(gaussian::log_negativity(sym), row.en_sym, 6);
    check_printed(gaussian::fidelity(sym), row.f_sym, 6);
  }
}

TEST_CASE("Log-negativity and fidelity versus distance match the mpmath reference to 1e-11") {
  // tests/reference/link_distance.csv, written by scripts/reference/link_distance.py (mpmath,
  // 40 digits, closed forms of Vidal & Werner and Braunstein & Kimble; header of the file).
  std::ifstream in(std::string(HERALDRY_TEST_DATA_DIR) + "/reference/link_distance.csv");
  REQUIRE(in.good());
  const auto source = gaussian::tmst(1.0, 0.01);
  std::string line;
  int rows = 0;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line.starts_with("geometry")) continue;
    std::stringstream ss(line);
    std::string geometry, field;
    std::vector<double> v;
    std::getline(ss, geometry, ',');
    while (std::getline(ss, field, ',')) v.push_back(std::stod(field));
    REQUIRE(v.size() == 3);
    const auto model =
        distance_table_model(geometry == "one_way" ? Geometry::one_way : Geometry::midpoint);
    const auto s = through_link(source, link_budget(model, v[0]));
    CAPTURE(line);
    CHECK(std::abs(gaussian::log_negativity(s) - v[1]) <= 1e-11);
    CHECK(std::abs(gaussian::fidelity(s) - v[2]) <= 1e-11);
    ++rows;
  }
  CHECK(rows == 34);
}

TEST_CASE("Entanglement of a TMSV vanishes at the closed-form maximum distances") {
  // Closed forms (docs/physics.md §2.6): one-way L_max = ln((n + 1)/n)/mu = 398.83 m; midpoint
  // L_max = -(2/mu) ln(1 - x), x = (1 - e^{-2r})/(2n + 1 - e^{-2r}): 252.18, 344.93, 379.05 m for
  // r = 0.5, 1, 1.5 (mu from 0.00871 dB/km, n = 1249.697).
  const double mu = per_metre_from_db_per_km(0.00871);
  const double n = planck_occupation(5e9, 300.0);
  const double l_asym = std::log((n + 1.0) / n) / mu;
  check_printed(l_asym, 398.83, 2);
  const auto one_way = distance_table_model(Geometry::one_way);
  for (double r : {0.5, 1.0, 1.5}) {
    const auto s = gaussian::tmst(r, 0.0);
    CHECK(gaussian::log_negativity(through_link(s, link_budget(one_way, 0.999 * l_asym))) > 0.0);
    CHECK(gaussian::log_negativity(through_link(s, link_budget(one_way, 1.001 * l_asym))) == 0.0);
  }
  const auto midpoint = distance_table_model(Geometry::midpoint);
  const double printed[] = {252.18, 344.93, 379.05};
  int i = 0;
  for (double r : {0.5, 1.0, 1.5}) {
    CAPTURE(r);
    const double e2r = std::exp(-2.0 * r);
    const double x = (1.0 - e2r) / (2.0 * n + 1.0 - e2r);
    const double l_sym = -(2.0 / mu) * std::log(1.0 - x);
    check_printed(l_sym, printed[i++], 2);
    const auto s = gaussian::tmst(r, 0.0);
    CHECK(gaussian::log_negativity(through_link(s, link_budget(midpoint, 0.999 * l_sym))) > 0.0);
    CHECK(gaussian::log_negativity(through_link(s, link_budget(midpoint, 1.001 * l_sym))) == 0.0);
  }
}

// ------------------------------------------------------------------------------- link budget

TEST_CASE("Midpoint geometry sends each mode over half the distance") {
  LinkModel m;  // defaults: air, ITU gases, 288.15 K
  m.antenna = Antenna{};
  m.antenna->interface_loss = 0.01;
  m.air.rain_mm_per_h = 10.0;
  m.geometry = Geometry::midpoint;
  const auto mid = link_budget(m, 3.0);
  m.geometry = Geometry::one_way;
  const auto half = link_budget(m, 1.5);
  for (const ModeBudget* x : {&mid.a, &mid.b}) {
    CHECK(x->channel.transmissivity == half.b.channel.transmissivity);
    CHECK(x->channel.bath_photons == half.b.channel.bath_photons);
    CHECK(x->loss.total_db() == half.b.loss.total_db());
  }
  CHECK(mid.distance_m == 3.0);
}

TEST_CASE("One-way geometry leaves mode a untouched") {
  LinkModel m;
  m.antenna = Antenna{};
  const auto b = link_budget(m, 2.0);
  CHECK(b.a.channel.transmissivity == 1.0);
  CHECK(b.a.channel.bath_photons == 0.0);
  CHECK(b.a.loss.total_db() == 0.0);
  CHECK(b.b.channel.transmissivity < 1.0);
}

TEST_CASE("A cryogenic line attenuates by its dB per metre at the line's Planck occupation") {
  // Closed form tau = 10^(-loss_db_per_m L / 10), n = planck(f, T_line).
  LinkModel m;
  m.medium = Medium::line;
  m.line.loss_db_per_m = 0.005;
  m.line.temperature_k = 0.05;
  m.antenna = Antenna{};  // ignored on a line
  const auto one = link_budget(m, 30.0);
  check_rel(one.b.channel.transmissivity, std::pow(10.0, -0.015), 1e-14);
  check_rel(one.b.channel.bath_photons, planck_occupation(5e9, 0.05), 1e-14);
  check_rel(one.b.loss.line_db, 0.15, 1e-14);
  check_rel(one.b.loss.total_db(), 0.15, 1e-14);
  m.geometry = Geometry::midpoint;
  const auto mid = link_budget(m, 30.0);
  check_rel(mid.a.channel.transmissivity, std::pow(10.0, -0.0075), 1e-14);
  check_rel(mid.b.loss.line_db, 0.075, 1e-14);
}

TEST_CASE("Direct channels are returned unchanged at any distance") {
  LinkModel m;
  m.direct = DirectChannels{{0.99, 0.1}, {0.95, 1250.0}};
  for (double d : {0.0, 10.0, 1e4}) {
    const auto b = link_budget(m, d);
    CHECK(b.a.channel.transmissivity == 0.99);
    CHECK(b.a.channel.bath_photons == 0.1);
    CHECK(b.b.channel.transmissivity == 0.95);
    CHECK(b.b.channel.bath_photons == 1250.0);
    check_rel(b.b.loss.direct_db, -10.0 * std::log10(0.95), 1e-14);
    CHECK(b.b.loss.total_db() == b.b.loss.direct_db);
  }
  m.direct->b.transmissivity = 1.5;
  CHECK_THROWS_AS(link_budget(m, 1.0), InputError);
}

TEST_CASE("An air path composes interface, beam, gases, rain and interface in this order") {
  // The documented rule of link_budget, rebuilt from the public pieces; the order matters for
  // the bath (a cold interface after the warm air shields nothing of it).
  LinkModel m;
  m.frequency_hz = 5.4e9;
  m.antenna = Antenna{0.6, 0.7, 0.02, 4.0};
  m.air.rain_mm_per_h = 25.0;
  const double d = 2.0;
  const double f_ghz = 5.4;
  const double t = m.air.temperature_k;
  const double e = vapour_pressure_hpa(m.air.water_vapour_gm3, t);
  const double area = 0.7 * pi * 0.3 * 0.3;
  const Channel interface { 0.98, planck_occupation(5.4e9, 4.0) };
  const double n_air = planck_occupation(5.4e9, t);
  const Channel beam{beam_coupling(area, area, speed_of_light / 5.4e9, d), n_air};
  const double gas_db = gaseous_attenuation(f_ghz, 1013.25 - e, e, t).total() * d / 1000.0;
  const double rain_db = rain_attenuation(f_ghz, 25.0, 0.0, 0.0) * d / 1000.0;
  const Channel gas{transmissivity_from_db(gas_db), n_air};
  const Channel rain{transmissivity_from_db(rain_db), n_air};
  const Channel expected =
      compose(compose(compose(compose(interface, beam), gas), rain), interface);

  const auto b = link_budget(m, d).b;
  check_rel(b.channel.transmissivity, expected.transmissivity, 1e-13);
  check_rel(b.channel.bath_photons, expected.bath_photons, 1e-12);
  check_rel(b.loss.interface_db, -20.0 * std::log10(0.98), 1e-13);
  check_rel(b.loss.beam_db, loss_db_from_transmissivity(beam.transmissivity), 1e-13);
  check_rel(b.loss.air_db, gas_db, 1e-12);
  check_rel(b.loss.rain_db, rain_db, 1e-12);
  CHECK(b.loss.line_db == 0.0);
  // dB add where transmissivities multiply (closed form).
  check_rel(b.loss.total_db(), loss_db_from_transmissivity(b.channel.transmissivity), 1e-12);
  // The check is sensitive to the order: both interfaces first would give another bath.
  const Channel other = compose(compose(compose(compose(interface, interface), beam), gas), rain);
  CHECK(std::abs(other.bath_photons / expected.bath_photons - 1.0) > 1e-3);
}

TEST_CASE("Without an antenna the air path has no beam and no interface loss") {
  LinkModel m;
  const auto b = link_budget(m, 100.0).b;
  CHECK(b.loss.beam_db == 0.0);
  CHECK(b.loss.interface_db == 0.0);
  CHECK(b.loss.air_db > 0.0);
  check_rel(b.channel.bath_photons, planck_occupation(5e9, 288.15), 1e-12);
}

TEST_CASE("Barometric pressure is split into dry air and water vapour for the ITU model") {
  // docs/physics.md §12.1: 5 GHz, 1013.25 hPa total, 288.15 K, 7.5 g/m^3 -> 0.00856 dB/km
  // (independent computation, 3 significant digits); the link uses p_dry = p_total - e.
  LinkModel m;
  const auto b = link_budget(m, 1000.0).b;
  check_printed(b.loss.air_db, 0.00856, 5);
  const double e = vapour_pressure_hpa(7.5, 288.15);
  check_rel(b.loss.air_db, gaseous_attenuation(5.0, 1013.25 - e, e, 288.15).total(), 1e-12);
  m.air.pressure_hpa = 5.0;  // below the vapour pressure: inconsistent input
  CHECK_THROWS_AS(link_budget(m, 1.0), InputError);
}

TEST_CASE("Link budget rejects a negative distance and unphysical parameters") {
  LinkModel m;
  CHECK_THROWS_AS(link_budget(m, -1.0), InputError);
  m.antenna = Antenna{};
  m.antenna->interface_loss = 1.0;
  CHECK_THROWS_AS(link_budget(m, 1.0), InputError);
  m.antenna->interface_loss = 0.0;
  m.air.temperature_k = -3.0;
  CHECK_THROWS_AS(link_budget(m, 1.0), InputError);
  bool thrown = false;
  try {
    link_budget(LinkModel{}, -2.0);
  } catch (const InputError& err) {
    thrown = true;
    CHECK(err.key() == "link.distance_m");
  }
  CHECK(thrown);
}

TEST_CASE("Loss breakdown keeps full relative precision for tiny losses") {
  // Closed forms: near field, the beam loses exp(-tau^2), i.e. -10 log10(1 - e^{-tau^2}) dB
  // = (10/ln 10) e^{-tau^2} to first order; a 1e-9 interface loss is (10/ln 10) 1e-9 dB.
  LinkModel m;
  m.antenna = Antenna{0.6, 0.7, 1e-9, 4.0};
  const double area = 0.7 * pi * 0.3 * 0.3;
  const double lambda = speed_of_light / m.frequency_hz;
  const double d = area / (lambda * std::sqrt(30.0));  // tau^2 = 30
  const auto b = link_budget(m, d).b;
  const double ln10 = std::log(10.0);
  check_rel(b.loss.beam_db, 10.0 / ln10 * std::exp(-30.0), 1e-9);
  check_rel(b.loss.interface_db, 2.0 * 10.0 / ln10 * 1e-9, 1e-8);
}
