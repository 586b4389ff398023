// The scenario schema: every key, its type, bounds, default and unit conversion, in one place.
// Units are converted to SI here and nowhere else (GHz, MHz, ns, us, degrees Celsius).
#include "heraldry/scenario.hpp"

#include <algorithm>
#include <climits>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <iterator>
#include <limits>
#include <memory>
#include <sstream>

#include "scenario/reader.hpp"

namespace heraldry::embedded {
extern const std::string_view demo_scenario_toml;
}

namespace heraldry::scenario {

using detail::Bounds;
using detail::Document;
using detail::Table;


std::string file_safe_name(std::string_view name) {
  std::string g(name);
  for (char& ch : g) {
    const bool keep = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') || ch == '-' ||
                      ch == '_' || ch == '.';
    if (!keep) ch = '_';
  }
  if (g.empty()) g = "_";
  if (g.front() == '.') g.front() = '_';
  return g;
}

const Param& Step::param(std::string_view key) const {
  const int i = type->param_index(key);
  if (i < 0 || static_cast<std::size_t>(i) >= params.size())
    throw std::out_of_range("step '" + std::string(type->name) + "' has no parameter '" + std::string(key) + "'");
  return params[static_cast<std::size_t>(i)];
}

const Counter* Scenario::find_counter(std::string_view name) const {
  for (const auto& c : counters)
    if (c.name == name) return &c;
  return nullptr;
}

namespace {

// 0 degrees Celsius in kelvin (SI Brochure, 9th ed., 2019, Sec. 2.3.1: t/°C = T/K - 273.15).
constexpr double celsius_zero_k = 273.15;

// The largest per-mode cutoff the engine accepts; also bounds the photon numbers a step may name.
constexpr int max_cutoff = 400;

// The largest numerics.max_points a scenario may set: a run holds every point's result in
// memory (a few hundred bytes each), so 1e9 points are already hundreds of GB.
constexpr std::int64_t max_points_ceiling = 1000000000;

const Bounds unit_closed = Bounds::closed(0.0, 1.0);
const Bounds unit_open_closed = {0.0, 1.0, true, false};   // (0, 1]
const Bounds unit_closed_open = {0.0, 1.0, false, true};   // [0, 1)
const Bounds positive = Bounds::above(0.0);
const Bounds non_negative = Bounds::at_least(0.0);

Table required_table(const Table& parent, std::string_view member, const std::string& expected) {
  auto t = parent.table(member);
  if (!t) parent.missing(member, expected);
  return *t;
}

// Domain bounds: every value the kernels receive is one they can represent (finite sums,
// products and exponentials, no overflow of 2 n + 1 or of rate x gate). The bounds are wide
// physical ones; each is named in its key's message.
// From 10 MHz: below it a room-temperature (10^4 K at most) bath holds more than ~10^7 photons
// and a 5e-324 GHz carrier gives an infinite Planck occupation.
const Bounds frequency_ghz_bounds = Bounds::closed(0.01, 1000.0);  // GHz
const Bounds squeezing_db_bounds = Bounds::closed(0.0, 30.0);
const Bounds occupation_bounds = Bounds::closed(0.0, 1.0e7);       // thermal photons per mode
const Bounds bandwidth_mhz_bounds = {0.0, 1.0e6, true, false};     // up to 1 THz
const Bounds temperature_k_bounds = Bounds::closed(0.0, 1.0e4);
const Bounds air_celsius_bounds = Bounds::closed(-100.0, 100.0);
const Bounds pressure_hpa_bounds = {0.0, 2000.0, true, false};
const Bounds vapour_bounds = Bounds::closed(0.0, 100.0);           // g/m^3
const Bounds rain_bounds = Bounds::closed(0.0, 500.0);             // mm/h
const Bounds db_per_km_bounds = Bounds::closed(0.0, 1.0e4);
const Bounds db_per_m_bounds = Bounds::closed(0.0, 1.0e3);
const Bounds diameter_bounds = {0.0, 1000.0, true, false};         // m
const Bounds distance_bounds = Bounds::closed(0.0, 1.0e7);         // m
// Losses in dB become power fractions below 1: 1 - 10^(-L/10) rounds to 1 beyond ~156 dB, and
// 10^(-RL/10) of a return loss rounds to 1 below ~1e-15 dB (the kernels refuse a fraction of 1).
const Bounds loss_db_bounds = Bounds::closed(0.0, 150.0);
const Bounds return_loss_bounds = Bounds::closed(1e-9, 300.0);

// A hardware number that may be swept: returns its first value as written; a list or range
// also becomes a SweptSetting (an axis) applied by `apply` to copies of the structs.
using Apply = std::function<void(Source&, link::LinkModel&, Counter&, double)>;
std::optional<double> hardware(const Table& t, std::string_view key, const Bounds& b, const char* units,
                               const std::string& description, Apply apply, std::vector<SweptSetting>& swept,
                               const std::string& counter = {}) {
  const auto p = t.param(key, b);
  if (!p) return std::nullopt;
  if (p->swept()) swept.push_back({t.key(key), units, description, p->values, counter, std::move(apply)});
  return p->first();
}

// ------------------------------------------------------------------------------------ source

// [source.covariance]: a measured covariance matrix and its convention -> the standard form.
gaussian::StandardForm read_covariance(const Table& c) {
  c.only({"matrix", "vacuum_variance", "order", "max_phase_asymmetry"});
  const toml::node* m = c.find("matrix");
  const std::string expected = "a 4 x 4 array of numbers (rows of the covariance matrix)";
  if (m == nullptr) c.missing("matrix", expected);
  const toml::array* rows = m->as_array();
  if (rows == nullptr || rows->size() != 4) c.doc().fail_at(*m, c.key("matrix"), expected);
  gaussian::Covariance v;
  for (std::size_t i = 0; i < 4; ++i) {
    const toml::array* row = rows->get(i)->as_array();
    if (row == nullptr || row->size() != 4) c.doc().fail_at(*rows->get(i), c.key("matrix") + "[" + std::to_string(i) + "]", "a row of 4 numbers");
    for (std::size_t j = 0; j < 4; ++j) {
      const toml::node& e = *row->get(j);
      const double x = e.is_number() ? e.value<double>().value_or(std::nan("")) : std::nan("");
      if (!std::isfinite(x) || std::abs(x) > 1.0e12)
        c.doc().fail_at(e, c.key("matrix") + "[" + std::to_string(i) + "][" + std::to_string(j) + "]",
                        "a finite number of magnitude <= 1e12");
      v(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = x;
    }
  }
  gaussian::CovarianceConvention conv;
  if (const auto vac = c.number("vacuum_variance", Bounds::any())) {
    if (*vac == 1.0) conv.vacuum = gaussian::VacuumVariance::one;
    else if (*vac == 0.5) conv.vacuum = gaussian::VacuumVariance::half;
    else if (*vac == 0.25) conv.vacuum = gaussian::VacuumVariance::quarter;
    else c.fail("vacuum_variance", "1 (x = a + a^dagger), 0.5 (x = (a + a^dagger)/sqrt 2) or 0.25 (x = (a + a^dagger)/2)");
  }
  conv.order = c.choice("order", {"xp_xp", "xx_pp"}).value_or(0) == 0 ? gaussian::QuadratureOrder::interleaved
                                                                       : gaussian::QuadratureOrder::grouped;
  const double asym = c.number_or("max_phase_asymmetry", Bounds::closed(0.0, 0.1), 1e-9);
  try {
    return gaussian::standard_form_from_measured(v, conv, asym, 1e-10, c.key("matrix"));
  } catch (const InputError& e) {
    c.doc().fail(Document::line(*m), e.key(), e.value(), e.expected(), e.hint());
  }
}

Source read_source(const Table& root, std::vector<SweptSetting>& swept) {
  const Table t = required_table(root, "source", "a [source] table");
  t.only({"frequency_ghz", "frequency_a_ghz", "frequency_b_ghz", "squeezing_db", "thermal_photons", "bandwidth_mhz",
          "measured_squeezing_db", "measured_antisqueezing_db", "covariance"});
  Source s;
  s.frequency_hz = t.required_number("frequency_ghz", frequency_ghz_bounds) * 1e9;
  if (const auto fa = t.number("frequency_a_ghz", frequency_ghz_bounds)) s.frequency_a_hz = *fa * 1e9;
  if (const auto fb = t.number("frequency_b_ghz", frequency_ghz_bounds)) s.frequency_b_hz = *fb * 1e9;

  // Exactly one description of the state: squeezing_db (+ thermal_photons), the measured EPR
  // variances, or a measured covariance matrix.
  const bool measured = t.has("measured_squeezing_db") || t.has("measured_antisqueezing_db");
  const bool covariance = t.has("covariance");
  const int ways = (t.has("squeezing_db") ? 1 : 0) + (measured ? 1 : 0) + (covariance ? 1 : 0);
  const char* three = "squeezing_db, measured_squeezing_db with measured_antisqueezing_db, or a [source.covariance] table";
  if (ways == 0) t.missing("squeezing_db", std::string("one of ") + three);
  if (ways > 1)
    t.fail(covariance ? "covariance" : "measured_squeezing_db", std::string("only one of ") + three);
  if ((measured || covariance) && t.has("thermal_photons"))
    t.fail("thermal_photons", "no thermal_photons with a measured source", "the measurement includes them");
  if (measured) {
    const Bounds db = Bounds::closed(-30.0, 60.0);
    const auto sq = t.number("measured_squeezing_db", db);
    const auto anti = t.number("measured_antisqueezing_db", db);
    if (!sq) t.missing("measured_squeezing_db", "a number in dB (the EPR variance below vacuum) with measured_antisqueezing_db");
    if (!anti) t.missing("measured_antisqueezing_db", "a number in dB (the EPR variance above vacuum) with measured_squeezing_db");
    try {
      const gaussian::TmstParameters p = gaussian::tmst_from_measured_db(*sq, *anti);
      s.squeezing_r = p.r;
      s.thermal_photons = p.thermal_photons;
    } catch (const InputError& e) {
      t.fail("measured_antisqueezing_db", e.expected(), e.hint());
    }
    s.given_as = "measured";
  } else if (covariance) {
    const auto c = t.table("covariance");
    s.state = read_covariance(*c);
    s.given_as = "covariance";
  } else {
    const toml::node* sq = t.find("squeezing_db");
    const toml::table* tt = sq->as_table();
    if (tt != nullptr && tt->contains("tune")) {
      const auto tuned = t.table("squeezing_db");
      const auto [lo, hi] = tuned->tune_range(squeezing_db_bounds);
      s.squeezing_r_tune = {squeezing_parameter_from_db(lo), squeezing_parameter_from_db(hi)};
      s.squeezing_r = squeezing_parameter_from_db(0.5 * (lo + hi));
    } else {
      const auto db = hardware(t, "squeezing_db", squeezing_db_bounds, "dB", "two-mode squeezing at the source",
                               [](Source& src, link::LinkModel&, Counter&, double v) {
                                 src.squeezing_r = squeezing_parameter_from_db(v);
                               },
                               swept);
      s.squeezing_r = squeezing_parameter_from_db(*db);
    }
    s.thermal_photons = t.number_or("thermal_photons", occupation_bounds, 0.0);
  }
  s.bandwidth_hz = t.required_number("bandwidth_mhz", bandwidth_mhz_bounds) * 1e6;
  return s;
}

// -------------------------------------------------------------------------------------- link

// A measured channel: transmissivity and the environment's occupation, or the noise the lab
// measured it to add, added_photons = (1 - tau) n_E (so n_E = added_photons / (1 - tau)).
link::Channel read_channel(const Table& direct, std::string_view mode) {
  const Table c = required_table(direct, mode, "a { transmissivity, bath_photons } table");
  c.only({"transmissivity", "bath_photons", "added_photons"});
  link::Channel ch;
  // (0, 1]: a channel that transmits nothing has no state at its output to speak of (the link
  // model refuses it).
  ch.transmissivity = c.required_number("transmissivity", unit_open_closed);
  if (c.has("bath_photons") && c.has("added_photons"))
    c.fail("added_photons", "only one of bath_photons and added_photons");
  ch.bath_photons = c.number_or("bath_photons", occupation_bounds, 0.0);
  if (const auto added = c.number("added_photons", occupation_bounds)) {
    if (*added > 0.0 && ch.transmissivity >= 1.0)
      c.fail("added_photons", "0 with transmissivity = 1", "a lossless channel adds no photons");
    ch.bath_photons = *added > 0.0 ? *added / (1.0 - ch.transmissivity) : 0.0;
    if (!(ch.bath_photons <= occupation_bounds.hi))
      c.fail("added_photons", "added_photons / (1 - transmissivity) <= 1e7 (the environment's occupation)");
  }
  return ch;
}

// One antenna key: its bounds, units, meaning, and how its value (as written) sets the field.
struct AntennaKey {
  const char* key;
  Bounds bounds;
  const char* units;
  const char* description;
  void (*set)(link::Antenna&, double);
};

const AntennaKey antenna_keys[] = {
    {"diameter_m", diameter_bounds, "m", "antenna diameter", [](link::Antenna& a, double v) { a.diameter_m = v; }},
    {"aperture_efficiency", {0.0, 1.0, true, false}, "1",
     "taper efficiency: the part of the aperture efficiency that shapes the beam (Goubau's effective area)",
     [](link::Antenna& a, double v) { a.aperture_efficiency = v; }},
    {"interface_loss", {0.0, 1.0, false, true}, "1", "power lost at the cryostat/air interface",
     [](link::Antenna& a, double v) { a.interface_loss = v; }},
    {"interface_temperature_k", temperature_k_bounds, "K", "temperature of what couples in at the interface",
     [](link::Antenna& a, double v) { a.interface_temperature_k = v; }},
    {"spillover_loss", {0.0, 1.0, false, true}, "1", "power of the feed pattern that misses the aperture",
     [](link::Antenna& a, double v) { a.spillover_loss = v; }},
    {"spillover_temperature_k", temperature_k_bounds, "K", "temperature of the surroundings the spillover sees",
     [](link::Antenna& a, double v) { a.spillover_temperature_k = v; }},
    {"ohmic_loss_db", loss_db_bounds, "dB", "ohmic loss of feed, reflector and radome",
     [](link::Antenna& a, double v) { a.ohmic_loss = link::lost_fraction_from_db(v); }},
    {"physical_temperature_k", temperature_k_bounds, "K", "the antenna's physical temperature (its ohmic noise)",
     [](link::Antenna& a, double v) { a.physical_temperature_k = v; }},
    {"return_loss_db", return_loss_bounds, "dB", "return loss of the feed (mismatch: 10^(-RL/10) reflected)",
     [](link::Antenna& a, double v) { a.mismatch_loss = link::reflected_fraction_from_return_loss_db(v); }},
    {"mismatch_temperature_k", temperature_k_bounds, "K", "temperature of what the mismatch reflects in (the cold side)",
     [](link::Antenna& a, double v) { a.mismatch_temperature_k = v; }},
};

enum class End { both, source, receiver };

// The antenna of `end` in a model (the shared one for `both`).
std::optional<link::Antenna>& antenna_of(link::LinkModel& m, End end) {
  return end == End::both ? m.antenna : end == End::source ? m.source_antenna : m.receiver_antenna;
}

// [link.antenna], [link.source_antenna] or [link.receiver_antenna]: an end table starts from the
// shared antenna (if any) and overrides the keys it writes. A swept key of the shared table also
// moves the ends that do not override it.
link::Antenna read_antenna(const Table& a, End end, const std::optional<link::Antenna>& shared,
                           const std::shared_ptr<std::vector<std::string>>& written, std::vector<SweptSetting>& swept) {
  std::vector<std::string_view> known;
  for (const auto& k : antenna_keys) known.push_back(k.key);
  a.only(known);
  link::Antenna an = end == End::both || !shared ? link::Antenna{} : *shared;
  if (!a.has("diameter_m") && (end == End::both || !shared))
    a.missing("diameter_m", diameter_bounds.number_text() + " (the dish or horn aperture)");
  for (const auto& k : antenna_keys) {
    const std::string key = k.key;
    const auto set = k.set;
    Apply apply;
    if (end == End::both) {
      // The end tables read later list what they override in `written` ("source.key").
      apply = [set, key, written](Source&, link::LinkModel& m, Counter&, double v) {
        if (m.antenna) set(*m.antenna, v);
        for (End e : {End::source, End::receiver}) {
          const std::string tag = std::string(e == End::source ? "source." : "receiver.") + key;
          if (antenna_of(m, e) && std::find(written->begin(), written->end(), tag) == written->end())
            set(*antenna_of(m, e), v);
        }
      };
    } else {
      apply = [set, end](Source&, link::LinkModel& m, Counter&, double v) {
        if (antenna_of(m, end)) set(*antenna_of(m, end), v);
      };
      if (a.has(key)) written->push_back(std::string(end == End::source ? "source." : "receiver.") + key);
    }
    if (const auto v = hardware(a, key, k.bounds, k.units, k.description, apply, swept)) set(an, *v);
  }
  return an;
}

link::Air read_air(const Table& a) {
  a.only({"model", "temperature_c", "pressure_hpa", "water_vapour_gm3", "rain_mm_per_h",
          "attenuation_db_per_km"});
  link::Air air;
  air.model = a.choice("model", {"itu", "fixed"}).value_or(0) == 0 ? link::AirModel::itu : link::AirModel::fixed;
  air.temperature_k = a.number_or("temperature_c", air_celsius_bounds, air.temperature_k - celsius_zero_k) + celsius_zero_k;
  air.pressure_hpa = a.number_or("pressure_hpa", pressure_hpa_bounds, air.pressure_hpa);
  air.water_vapour_gm3 = a.number_or("water_vapour_gm3", vapour_bounds, air.water_vapour_gm3);
  air.rain_mm_per_h = a.number_or("rain_mm_per_h", rain_bounds, air.rain_mm_per_h);
  // The gas model splits the total pressure into dry air and water vapour: the total cannot be
  // below the vapour's partial pressure e = rho T / 216.7 (ITU-R P.676-13 Annex 1, Eq. 4).
  if (air.model == link::AirModel::itu) {
    const double e = link::vapour_pressure_hpa(air.water_vapour_gm3, air.temperature_k);
    if (!(air.pressure_hpa >= e))
      a.fail(a.has("pressure_hpa") ? "pressure_hpa" : "water_vapour_gm3",
             "a barometric (total) pressure >= the water-vapour partial pressure (" + detail::format_number(e) +
                 " hPa here: water_vapour_gm3 x temperature / 216.7)");
  }
  const auto fixed = a.number("attenuation_db_per_km", db_per_km_bounds);
  if (air.model == link::AirModel::fixed) {
    if (!fixed) a.missing("attenuation_db_per_km", db_per_km_bounds.number_text() + " with model = \"fixed\"");
    air.fixed_db_per_km = *fixed;
  } else if (fixed) {
    a.fail("attenuation_db_per_km", "no fixed attenuation with model = \"itu\"",
           "set model = \"fixed\" to use it");
  }
  return air;
}

link::Line read_line(const Table& l, std::vector<SweptSetting>& swept) {
  l.only({"loss_db_per_m", "temperature_k"});
  link::Line line;
  const auto loss = hardware(l, "loss_db_per_m", db_per_m_bounds, "dB/m", "cryogenic line loss",
                             [](Source&, link::LinkModel& m, Counter&, double v) { m.line.loss_db_per_m = v; }, swept);
  if (!loss) l.missing("loss_db_per_m", db_per_m_bounds.number_text());
  line.loss_db_per_m = *loss;
  line.temperature_k = hardware(l, "temperature_k", temperature_k_bounds, "K", "cryogenic line temperature",
                                [](Source&, link::LinkModel& m, Counter&, double v) { m.line.temperature_k = v; }, swept)
                           .value_or(0.05);
  return line;
}

Link read_link(const Table& root, const Source& source, std::vector<SweptSetting>& swept) {
  const Table t = required_table(root, "link", "a [link] table");
  t.only({"medium", "geometry", "distance_m", "target_m", "antenna", "source_antenna", "receiver_antenna", "air",
          "line", "direct"});
  Link out;
  link::LinkModel& m = out.model;
  m.frequency_hz = source.frequency_hz;
  m.frequency_a_hz = source.frequency_a_hz;
  m.frequency_b_hz = source.frequency_b_hz;

  const auto direct = t.table("direct");
  const auto medium = t.choice("medium", {"air", "line"});
  // Measured channels replace the model: no medium, geometry, distance or path tables.
  if (direct) {
    for (const char* key : {"medium", "geometry", "distance_m", "target_m", "antenna", "source_antenna",
                            "receiver_antenna", "air", "line"})
      if (t.has(key))
        t.fail(key, "nothing but [link.direct] for measured channels",
               "the measured channels replace the link model and the distance");
    direct->only({"a", "b"});
    m.direct = link::DirectChannels{read_channel(*direct, "a"), read_channel(*direct, "b")};
    out.distances_m = {0.0};
    out.target_m = 0.0;
    return out;
  }
  if (!medium) t.missing("medium", "\"air\" or \"line\"");
  m.medium = *medium == 0 ? link::Medium::air : link::Medium::line;
  m.geometry = t.choice("geometry", {"one-way", "midpoint"}).value_or(0) == 0 ? link::Geometry::one_way
                                                                                : link::Geometry::midpoint;
  const auto p = t.param("distance_m", distance_bounds);
  if (!p) t.missing("distance_m", distance_bounds.number_text() + ", a non-empty list of such numbers or a { from, to, points } table");
  out.distances_m = p->values;

  // Tables that only one medium uses are refused with the other, rather than ignored.
  const char* air_only = "no such table with medium = \"line\"";
  // Which keys the end tables override (for sweeps of the shared antenna); shared with the
  // settings' closures.
  auto written = std::make_shared<std::vector<std::string>>();
  const std::pair<const char*, End> tables[] = {
      {"antenna", End::both}, {"source_antenna", End::source}, {"receiver_antenna", End::receiver}};
  for (const auto& [name, end] : tables) {
    if (const auto a = t.table(name)) {
      if (m.medium != link::Medium::air) t.fail(name, air_only, "antennas radiate into open air");
      antenna_of(m, end) = read_antenna(*a, end, m.antenna, written, swept);
    }
  }
  if ((m.source_antenna || m.receiver_antenna) && !m.antenna && !(m.source_antenna && m.receiver_antenna))
    t.fail(m.source_antenna ? "source_antenna" : "receiver_antenna",
           "an antenna at both ends ([link.antenna] for both, or [link.source_antenna] and [link.receiver_antenna])");
  if (const auto a = t.table("air")) {
    if (m.medium != link::Medium::air) t.fail("air", air_only, "a cryogenic line has no air path");
    m.air = read_air(*a);
  }
  // The ITU-R gas and rain models hold from 1 to 1000 GHz (P.676-13 Annex 1, P.838-3): a carrier
  // outside is refused at its own key, before any kernel sees it.
  if (m.medium == link::Medium::air && m.air.model == link::AirModel::itu) {
    const Table src = required_table(root, "source", "a [source] table");
    for (const Mode mode : {Mode::A, Mode::B}) {
      // In GHz as the link model computes it (f x 1e-9: 1000 GHz becomes 1000.0000000000001).
      const double f_ghz = link::mode_frequency_hz(m, mode) * 1e-9;
      if (f_ghz >= 1.0 && f_ghz <= 1000.0) continue;
      const char* own = mode == Mode::A ? "frequency_a_ghz" : "frequency_b_ghz";
      src.fail(src.has(own) ? own : "frequency_ghz", "a frequency within 1-1000 GHz with the ITU-R air model",
               "the range of ITU-R P.676-13 Annex 1 and P.838-3; set [link.air] model = \"fixed\" outside it");
    }
  }
  if (const auto l = t.table("line")) {
    if (m.medium != link::Medium::line) t.fail("line", "no such table with medium = \"air\"", "set medium = \"line\"");
    m.line = read_line(*l, swept);
  } else if (m.medium == link::Medium::line) {
    t.missing("line", "a [link.line] table with medium = \"line\"");
  }

  const auto [lo, hi] = std::minmax_element(out.distances_m.begin(), out.distances_m.end());
  out.target_m = *hi;
  if (const auto target = t.number("target_m", Bounds::any())) {
    const Bounds span = Bounds::closed(*lo, *hi);
    if (!span.contains(*target)) t.fail("target_m", span.number_text(), "within the distance axis");
    out.target_m = *target;
  }
  return out;
}

// ---------------------------------------------------------------------------------- counters

std::vector<Counter> read_counters(const Table& root, std::vector<SweptSetting>& swept) {
  const auto t = root.table("counters");
  if (!t) return {};
  std::vector<Counter> out;
  for (const auto& [name, node] : t->members()) {
    if (!node->is_table()) root.doc().fail_at(*node, t->key(name), "a [counters.NAME] table");
    const Table c(root.doc(), *node->as_table(), t->key(name), Document::line(*node));
    c.only({"kind", "efficiency", "dark_rate_hz", "dark_per_gate", "gate_ns", "reset_us"});
    Counter k;
    k.name = std::string(name);
    const auto kind = c.choice("kind", {"threshold", "resolving"});
    if (!kind) c.missing("kind", "\"threshold\" or \"resolving\"");
    k.kind = *kind == 0 ? CounterKind::threshold : CounterKind::resolving;
    k.efficiency = c.required_param("efficiency", unit_closed);
    // Gate and dead time may be swept; a dark rate is converted per gate at each gate.
    const auto gate_ns = hardware(c, "gate_ns", {1e-3, 1e12, false, false}, "ns", "counter gate (detection window)",
                                  [](Source&, link::LinkModel&, Counter& k, double v) { k.gate_s = v * 1e-9; }, swept,
                                  k.name);
    if (gate_ns) k.gate_s = *gate_ns * 1e-9;
    k.reset_s = hardware(c, "reset_us", Bounds::closed(0.0, 1e9), "us", "counter dead time after a gate",
                         [](Source&, link::LinkModel&, Counter& k, double v) { k.reset_s = v * 1e-6; }, swept, k.name)
                    .value_or(0.0) *
                1e-6;

    if (c.has("dark_rate_hz") && c.has("dark_per_gate"))
      c.fail("dark_per_gate", "only one of dark_rate_hz and dark_per_gate");
    if (const auto rate = c.param("dark_rate_hz", Bounds::closed(0.0, 1e12))) {
      if (!gate_ns) c.missing("gate_ns", "a number > 0 (the gate length) with dark_rate_hz");
      k.dark_rate_hz = rate;
      // Poissonian dark counts of rate R over a gate t: mean R t per gate; a threshold counter
      // clicks on at least one, p = 1 - exp(-R t).
      double longest_gate = k.gate_s;
      for (const auto& st : swept)
        if (st.counter == k.name && st.name == c.key("gate_ns"))
          for (double g : st.values) longest_gate = std::max(longest_gate, g * 1e-9);
      for (double r : rate->values) {
        // A rate times a gate can exceed what a Poisson mean per gate can be: refused here, where
        // the message can name the key and the line, not later by the counter model.
        if (!(r * longest_gate <= 1e9))
          c.fail("dark_rate_hz", "a rate whose dark counts per gate (rate x gate) are at most 1e9");
        k.dark_per_gate.values.push_back(steps::dark_per_gate(k.kind, r, k.gate_s));
      }
    } else if (k.kind == CounterKind::threshold) {
      k.dark_per_gate = c.param("dark_per_gate", unit_closed).value_or(Param{{0.0}, std::nullopt});
    } else {
      k.dark_per_gate = c.param("dark_per_gate", non_negative).value_or(Param{{0.0}, std::nullopt});
    }
    for (const Counter& other : out)
      if (file_safe_name(other.name) == file_safe_name(k.name))
        root.doc().fail_at(*node, t->key(name), "a counter name that differs from the others in file names",
                           "it and counters." + other.name + " both become '" + file_safe_name(k.name) +
                               "' in the result file");
    out.push_back(std::move(k));
  }
  return out;
}

// --------------------------------------------------------------------------------- protocols

// The heralded and channel kinds of the registry: the keys that name a step table.
std::vector<std::string_view> step_table_kinds() {
  std::vector<std::string_view> out;
  for (const steps::StepType* t : steps::registry())
    if (t->role != steps::StepType::Role::link) out.push_back(t->name);
  return out;
}

std::string read_counter_name(const Table& st, const std::vector<Counter>& counters) {
  const auto name = st.string("counter");
  if (!name) st.missing("counter", "the name of a [counters.NAME] table");
  if (std::none_of(counters.begin(), counters.end(), [&](const Counter& c) { return c.name == *name; })) {
    if (counters.empty()) st.fail("counter", "a counter defined in a [counters.NAME] table");
    std::vector<std::string_view> names;
    for (const auto& c : counters) names.push_back(c.name);
    const auto near = detail::closest(*name, names);
    st.fail("counter", "one of the counters " + detail::plain_list(names),
            near ? "did you mean '" + *near + "'?" : std::string());
  }
  return *name;
}

Bounds bounds_of(const steps::Range& r) { return {r.lo, r.hi, r.lo_open, r.hi_open}; }

std::string integer_text(const steps::Range& r) {
  return "an integer in [" + std::to_string(static_cast<long long>(r.lo)) + ", " +
         std::to_string(static_cast<long long>(r.hi)) + "]";
}

// One parameter of a step table, by its schema: a number (list, range or tune range) or an
// integer; under its own key or its alternative one; its default when absent.
Param read_step_param(const Table& st, const steps::ParamSchema& ps) {
  if (ps.type == steps::ParamSchema::Type::integer) {
    const auto v = st.integer(ps.key, static_cast<std::int64_t>(ps.range.lo), static_cast<std::int64_t>(ps.range.hi));
    if (v) return Param{{static_cast<double>(*v)}, std::nullopt};
    if (!ps.fallback) st.missing(ps.key, integer_text(ps.range));
    return Param{{*ps.fallback}, std::nullopt};
  }
  const Bounds b = bounds_of(ps.range);
  const auto own = st.param(ps.key, b, true);
  std::optional<Param> alt;
  if (!ps.alternative_key.empty()) {
    alt = st.param(ps.alternative_key, bounds_of(ps.alternative_range), true);
    if (own && alt)
      st.fail(ps.alternative_key,
              "only one of " + std::string(ps.key) + " and " + std::string(ps.alternative_key));
  }
  if (own) return *own;
  if (alt) {
    Param p;
    for (double x : alt->values) p.values.push_back(ps.alternative_to_si(x));
    // A tuned value in the other units is tuned as the value it stands for (the conversion may
    // reverse the order: a loss in dB decreases the transmissivity).
    if (alt->tune) {
      const double x = ps.alternative_to_si(alt->tune->first), y = ps.alternative_to_si(alt->tune->second);
      p.tune = {{std::min(x, y), std::max(x, y)}};
    }
    return p;
  }
  if (ps.fallback) return Param{{*ps.fallback}, std::nullopt};
  if (!ps.alternative_key.empty())
    st.missing(ps.key, b.number_text() + " (or " + std::string(ps.alternative_key) + ", " +
                           bounds_of(ps.alternative_range).number_text() + ")");
  st.missing(ps.key, b.number_text() + ", a non-empty list of such numbers or a { from, to, points } table");
}

Step read_step_table(const Table& st, const std::vector<Counter>& counters) {
  // Exactly one kind key names the step and the mode it acts on.
  const std::vector<std::string_view> step_kinds = step_table_kinds();
  std::vector<std::pair<std::string_view, const toml::node*>> kinds;
  for (const auto& kv : st.members())
    if (std::find(step_kinds.begin(), step_kinds.end(), kv.first) != step_kinds.end()) kinds.push_back(kv);
  if (kinds.empty()) {
    std::string hint;
    for (const auto& kv : st.members())
      if (const auto near = detail::closest(kv.first, step_kinds)) {
        hint = "did you mean '" + *near + "'?";
        break;
      }
    st.doc().fail(st.line(), st.path(), st.doc().written(st.raw()),
                  "a step table with one of the keys " + detail::plain_list(step_kinds), hint);
  }
  if (kinds.size() > 1)
    st.fail(kinds[1].first, "a single step kind per table",
            std::string("'").append(kinds[0].first) + "' already names this step");

  Step s;
  s.line = st.line();
  s.type = steps::find_step_type(kinds[0].first);
  const steps::StepType& type = *s.type;
  s.mode = *st.choice(type.name, {"a", "b"}) == 0 ? Mode::A : Mode::B;

  std::vector<std::string_view> known{type.name};
  for (const auto& ps : type.params) {
    known.push_back(ps.key);
    if (!ps.alternative_key.empty()) known.push_back(ps.alternative_key);
  }
  if (type.uses_counter) known.push_back("counter");
  st.only(known);

  for (const auto& ps : type.params) s.params.push_back(read_step_param(st, ps));
  if (!type.uses_counter) return s;
  s.counter = read_counter_name(st, counters);
  if (type.check) {
    // Checks against the counter that the schema cannot express, with the first values.
    const Counter& c = *std::find_if(counters.begin(), counters.end(), [&](const Counter& k) { return k.name == s.counter; });
    steps::StepSpec spec;
    spec.type = s.type;
    spec.mode = s.mode;
    for (const Param& p : s.params) spec.values.push_back(p.first());
    steps::CounterModel model;
    model.kind = c.kind;
    model.efficiency = c.efficiency.first();
    model.dark = c.dark_per_gate.first();
    model.gate_s = c.gate_s;
    model.reset_s = c.reset_s;
    try {
      type.check(spec, model, c.name);
    } catch (const InputError& e) {
      st.fail(e.key(), e.expected(), e.hint());
    }
  }
  return s;
}

// The label of a step table before it is read: "<kind>_<mode>" when the table names one kind
// and one mode, else nothing (the table's own errors then name it by its index).
std::optional<std::string> pre_label(const toml::table& t) {
  std::optional<std::string> label;
  for (const steps::StepType* type : steps::registry()) {
    if (type->role == steps::StepType::Role::link) continue;
    const toml::node* n = t.get(type->name);
    if (n == nullptr) continue;
    if (label || !n->is_string()) return std::nullopt;
    const std::string& mode = n->as_string()->get();
    if (mode != "a" && mode != "b") return std::nullopt;
    label = std::string(type->name) + "_" + mode;
  }
  return label;
}

Protocol read_protocol(const Table& p, const std::vector<Counter>& counters) {
  p.only({"name", "steps", "relay"});
  Protocol out;
  const auto name = p.string("name");
  if (!name) p.missing("name", "a non-empty string");
  if (name->empty()) p.fail("name", "a non-empty string");
  out.name = *name;
  // From here on the protocol's keys are named after it: "NAME:steps", "NAME:tap_b.transmissivity".
  const std::string prefix = out.name + ":";

  const toml::node* steps = p.find("steps");
  const std::string steps_key = prefix + "steps";
  const char* one_link = "a list of steps with exactly one \"link\"";
  if (steps == nullptr) p.missing("steps", one_link);
  const toml::array* list = steps->as_array();
  if (list == nullptr) p.doc().fail_at(*steps, steps_key, one_link);

  int links = 0;
  std::vector<std::string> labels;
  for (std::size_t j = 0; j < list->size(); ++j) {
    const toml::node& e = *list->get(j);
    const std::string index_key = prefix + "steps[" + std::to_string(j) + "]";
    if (const auto* s = e.as_string()) {
      if (s->get() != "link") {
        const auto near = detail::closest(s->get(), {"link"});
        p.doc().fail_at(e, index_key, "\"link\" or an inline step table", near ? "did you mean \"link\"?" : std::string());
      }
      if (++links > 1) p.doc().fail_at(e, prefix + "link", "exactly one \"link\" step per protocol", "a second one");
      Step st;
      st.type = &steps::link_type();
      st.label = "link";
      st.line = Document::line(e);
      out.steps.push_back(st);
    } else if (const auto* t = e.as_table()) {
      // The n-th step of one kind on one mode is "<kind>_<mode>#n" (n >= 2).
      std::optional<std::string> label = pre_label(*t);
      if (label) {
        const auto seen = std::count(labels.begin(), labels.end(), *label);
        labels.push_back(*label);
        if (seen > 0) *label += "#" + std::to_string(seen + 1);
      }
      Step st = read_step_table(Table(p.doc(), *t, label ? prefix + *label : index_key, Document::line(e)), counters);
      st.label = *label;  // a table without a label has failed in read_step_table
      out.steps.push_back(std::move(st));
    } else {
      p.doc().fail_at(e, index_key, "\"link\" or an inline step table");
    }
  }
  if (links == 0) p.doc().fail_at(*steps, steps_key, "exactly one \"link\" step per protocol", "found none");
  if (p.has("relay")) {
    const toml::node* n = p.find("relay");
    if (!n->is_table()) p.doc().fail_at(*n, prefix + "relay", "a table such as { bell_efficiency = 0.9 }");
    const Table r(p.doc(), *n->as_table(), prefix + "relay", Document::line(*n));
    r.only({"bell_efficiency", "gain"});
    Relay relay;
    relay.bell_efficiency = r.number_or("bell_efficiency", Bounds{0.0, 1.0, true, false}, 1.0);
    relay.gain = r.number_or("gain", Bounds{0.0, 10.0, true, false}, 1.0);
    relay.line = Document::line(*n);
    out.relay = relay;
  }
  return out;
}

std::vector<Protocol> read_protocols(const Table& root, const std::vector<Counter>& counters) {
  const char* expected = "at least one [[protocol]] table";
  const toml::node* n = root.find("protocol");
  if (n == nullptr) root.missing("protocol", expected);
  const toml::array* a = n->as_array();
  if (a == nullptr || a->empty() || !a->is_array_of_tables())
    root.doc().fail_at(*n, "protocol", expected, n->is_table() ? "write [[protocol]], with double brackets" : "");
  std::vector<Protocol> out;
  for (std::size_t i = 0; i < a->size(); ++i) {
    const toml::node& e = *a->get(i);
    const Table p(root.doc(), *e.as_table(), "protocol[" + std::to_string(i) + "]", Document::line(e));
    Protocol pr = read_protocol(p, counters);
    for (std::size_t j = 0; j < out.size(); ++j) {
      if (out[j].name == pr.name)
        p.fail("name", "a protocol name used once", "protocol[" + std::to_string(j) + "] has it already");
      if (file_safe_name(out[j].name) == file_safe_name(pr.name))
        p.fail("name", "a protocol name that differs from the others in file names",
               "it and protocol[" + std::to_string(j) + "] (\"" + out[j].name + "\") both become '" +
                   file_safe_name(pr.name) + "' in the result file and the plots");
    }
    out.push_back(std::move(pr));
  }
  return out;
}

// ------------------------------------------------------------------------- numerics, output

Numerics read_numerics(const Table& root) {
  Numerics n;
  const auto t = root.table("numerics");
  if (!t) return n;
  t->only({"engine", "cutoff", "tolerance", "threads", "max_memory_mb", "max_cutoff", "max_points"});
  n.engine = t->choice("engine", {"sector", "dense"}).value_or(0) == 0 ? EngineKind::sector : EngineKind::dense;
  if (const toml::node* c = t->find("cutoff")) {
    const std::string expected = "\"auto\" or an integer in [1, " + std::to_string(max_cutoff) + "]";
    if (const auto* s = c->as_string()) {
      if (s->get() != "auto") t->fail("cutoff", expected);
      n.cutoff = 0;
    } else if (c->is_integer() && c->as_integer()->get() >= 1 && c->as_integer()->get() <= max_cutoff) {
      n.cutoff = static_cast<int>(c->as_integer()->get());
    } else {
      t->fail("cutoff", expected);
    }
  }
  // Below 1e-20 a tolerance says nothing double precision can honour (the figures carry ~1e-12
  // of round-off; tolerance^2 P would underflow).
  n.tolerance = t->number_or("tolerance", Bounds::closed(1e-20, 1e-2), n.tolerance);
  n.threads = static_cast<int>(t->integer("threads", 0, 1024).value_or(n.threads));
  n.max_memory_mb = t->number_or("max_memory_mb", {0.0, 1.0e7, true, false}, n.max_memory_mb);
  n.max_cutoff = static_cast<int>(t->integer("max_cutoff", 1, max_cutoff).value_or(n.max_cutoff));
  n.max_points = t->integer("max_points", 1, max_points_ceiling).value_or(n.max_points);
  return n;
}

// The size of each protocol's grid, axis by axis as sweep::make_plan lays it out (distance,
// swept source and link settings, swept step parameters, then per counter the protocol uses:
// efficiency, dark rate or dark count per gate, gate and dead time), multiplied with overflow
// checks. A grid above numerics.max_points (or one whose count overflows) is refused naming the
// protocol, its axes and their sizes.
void check_grid_sizes(const Table& root, const Scenario& s) {
  const toml::array& list = *root.find("protocol")->as_array();
  for (std::size_t i = 0; i < s.protocols.size(); ++i) {
    const Protocol& proto = s.protocols[i];
    std::vector<std::pair<std::string, std::size_t>> axes{{"distance_m", s.link.distances_m.size()}};
    for (const SweptSetting& st : s.settings)
      if (st.counter.empty()) axes.emplace_back(st.name, st.values.size());
    for (const Step& step : proto.steps)
      for (std::size_t k = 0; k < step.params.size(); ++k)
        if (step.params[k].swept())
          axes.emplace_back(step.label + "." + std::string(step.type->params[k].key), step.params[k].values.size());
    for (const Counter& c : s.counters) {
      if (std::none_of(proto.steps.begin(), proto.steps.end(), [&](const Step& st) { return st.counter == c.name; }))
        continue;
      if (c.efficiency.swept()) axes.emplace_back("counters." + c.name + ".efficiency", c.efficiency.values.size());
      if (c.dark_rate_hz && c.dark_rate_hz->swept())
        axes.emplace_back("counters." + c.name + ".dark_rate_hz", c.dark_rate_hz->values.size());
      else if (c.dark_per_gate.swept())
        axes.emplace_back("counters." + c.name + ".dark_per_gate", c.dark_per_gate.values.size());
      for (const SweptSetting& st : s.settings)
        if (st.counter == c.name) axes.emplace_back(st.name, st.values.size());
    }
    const auto limit = static_cast<std::size_t>(s.numerics.max_points);
    std::size_t count = 1;
    bool overflow = false;
    std::string sizes;
    for (const auto& [name, n] : axes) {
      sizes += (sizes.empty() ? "" : " x ") + name + " " + std::to_string(n);
      if (!overflow && n != 0 && count > std::numeric_limits<std::size_t>::max() / n) overflow = true;
      if (!overflow) count *= n;
    }
    if (!overflow && count <= limit) continue;
    const Table p(root.doc(), *list.get(i)->as_table(), "protocol[" + std::to_string(i) + "]",
                  Document::line(*list.get(i)));
    p.fail("name", "a grid of at most numerics.max_points = " + std::to_string(limit) + " points",
           "its grid has " + (overflow ? std::string("more than 1.8e19") : std::to_string(count)) + " points: " + sizes +
               "; use fewer values on an axis, or raise numerics.max_points (at most " +
               std::to_string(max_points_ceiling) + ")");
  }
}

Output read_output(const Table& root) {
  Output o;
  const auto t = root.table("output");
  if (!t) return o;
  t->only({"file", "heralds_wanted"});
  if (const auto f = t->string("file")) {
    if (f->empty()) t->fail("file", "a non-empty path");
    o.file = *f;
  }
  o.heralds_wanted = t->number("heralds_wanted", positive);
  return o;
}

}  // namespace

Scenario parse(std::string_view text, const std::string& file_name) {
  const Document doc(text, file_name);
  const Table root(doc, doc.root(), "", 0);
  root.only({"title", "source", "link", "counters", "protocol", "numerics", "output"});
  Scenario s;
  s.path = file_name;
  s.text = std::string(text);
  s.title = root.string("title").value_or("");
  s.source = read_source(root, s.settings);
  s.link = read_link(root, s.source, s.settings);
  s.counters = read_counters(root, s.settings);
  s.protocols = read_protocols(root, s.counters);
  for (const Protocol& pr : s.protocols)
    if (pr.relay && s.link.measured())
      detail::raise(file_name, pr.relay->line, pr.name + ":relay", "{ ... }",
                    "a modelled link (a relay splits the path at its midpoint; [link.direct] has no midpoint)");
  s.numerics = read_numerics(root);
  check_grid_sizes(root, s);
  s.output = read_output(root);
  return s;
}

Scenario load(const std::string& path) {
  std::error_code ec;
  std::ostringstream text;
  if (path == "-") {
    // "-": the scenario comes on standard input (a pipe, a here-document).
    text << std::cin.rdbuf();
    if (std::cin.bad()) detail::raise("<stdin>", 0, "<file>", "", "a scenario on standard input");
    return parse(text.str(), "<stdin>");
  }
  bool ok = std::filesystem::is_regular_file(path, ec);
  if (ok) {
    std::ifstream in(path, std::ios::binary);
    ok = static_cast<bool>(in);
    if (ok && in.peek() != std::ifstream::traits_type::eof()) ok = static_cast<bool>(text << in.rdbuf());
    ok = ok && !in.bad();
  }
  if (!ok) detail::raise(path, 0, "<file>", "", "a readable scenario file");
  return parse(text.str(), path);
}

std::string_view demo_text() { return embedded::demo_scenario_toml; }

Scenario demo() { return parse(demo_text(), "<demo>"); }

}  // namespace heraldry::scenario
