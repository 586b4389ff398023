// The scenario schema: every key, its type, bounds, default and unit conversion, in one place.
// Units are converted to SI here and nowhere else (GHz, MHz, ns, us, degrees Celsius).
#include "heraldry/scenario.hpp"

#include <algorithm>
#include <climits>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <iterator>
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

// ------------------------------------------------------------------------------------ source

Source read_source(const Table& root) {
  const Table t = required_table(root, "source", "a [source] table");
  t.only({"frequency_ghz", "squeezing_db", "thermal_photons", "bandwidth_mhz"});
  Source s;
  s.frequency_hz = t.required_number("frequency_ghz", positive) * 1e9;
  const Bounds squeezing = Bounds::closed(0.0, 30.0);
  const toml::node* sq = t.find("squeezing_db");
  if (sq != nullptr && sq->is_table()) {
    const auto tuned = t.table("squeezing_db");
    if (!tuned->has("tune")) t.fail("squeezing_db", squeezing.number_text() + " or { tune = [lo, hi] }");
    const auto [lo, hi] = tuned->tune_range(squeezing);
    s.squeezing_r_tune = {squeezing_parameter_from_db(lo), squeezing_parameter_from_db(hi)};
    s.squeezing_r = squeezing_parameter_from_db(0.5 * (lo + hi));
  } else {
    s.squeezing_r = squeezing_parameter_from_db(t.required_number("squeezing_db", squeezing));
  }
  s.thermal_photons = t.number_or("thermal_photons", non_negative, 0.0);
  s.bandwidth_hz = t.required_number("bandwidth_mhz", positive) * 1e6;
  return s;
}

// -------------------------------------------------------------------------------------- link

link::Channel read_channel(const Table& direct, std::string_view mode) {
  const Table c = required_table(direct, mode, "a { transmissivity, bath_photons } table");
  c.only({"transmissivity", "bath_photons"});
  link::Channel ch;
  ch.transmissivity = c.required_number("transmissivity", unit_closed);
  ch.bath_photons = c.number_or("bath_photons", non_negative, 0.0);
  return ch;
}

link::Antenna read_antenna(const Table& a) {
  a.only({"diameter_m", "aperture_efficiency", "interface_loss", "interface_temperature_k"});
  link::Antenna an;
  an.diameter_m = a.required_number("diameter_m", positive);
  an.aperture_efficiency = a.number_or("aperture_efficiency", unit_open_closed, an.aperture_efficiency);
  an.interface_loss = a.number_or("interface_loss", unit_closed_open, an.interface_loss);
  an.interface_temperature_k = a.number_or("interface_temperature_k", non_negative, an.interface_temperature_k);
  return an;
}

link::Air read_air(const Table& a) {
  a.only({"model", "temperature_c", "pressure_hpa", "water_vapour_gm3", "rain_mm_per_h",
          "attenuation_db_per_km"});
  link::Air air;
  air.model = a.choice("model", {"itu", "fixed"}).value_or(0) == 0 ? link::AirModel::itu : link::AirModel::fixed;
  air.temperature_k =
      a.number_or("temperature_c", Bounds::above(-celsius_zero_k), air.temperature_k - celsius_zero_k) +
      celsius_zero_k;
  air.pressure_hpa = a.number_or("pressure_hpa", positive, air.pressure_hpa);
  air.water_vapour_gm3 = a.number_or("water_vapour_gm3", non_negative, air.water_vapour_gm3);
  air.rain_mm_per_h = a.number_or("rain_mm_per_h", non_negative, air.rain_mm_per_h);
  const auto fixed = a.number("attenuation_db_per_km", non_negative);
  if (air.model == link::AirModel::fixed) {
    if (!fixed) a.missing("attenuation_db_per_km", "a number >= 0 with model = \"fixed\"");
    air.fixed_db_per_km = *fixed;
  } else if (fixed) {
    a.fail("attenuation_db_per_km", "no fixed attenuation with model = \"itu\"",
           "set model = \"fixed\" to use it");
  }
  return air;
}

link::Line read_line(const Table& l) {
  l.only({"loss_db_per_m", "temperature_k"});
  link::Line line;
  line.loss_db_per_m = l.required_number("loss_db_per_m", non_negative);
  line.temperature_k = l.number_or("temperature_k", non_negative, 0.05);
  return line;
}

Link read_link(const Table& root, const Source& source) {
  const Table t = required_table(root, "link", "a [link] table");
  t.only({"medium", "geometry", "distance_m", "target_m", "antenna", "air", "line", "direct"});
  Link out;
  link::LinkModel& m = out.model;
  m.frequency_hz = source.frequency_hz;

  const auto medium = t.choice("medium", {"air", "line"});
  if (!medium) t.missing("medium", "\"air\" or \"line\"");
  m.medium = *medium == 0 ? link::Medium::air : link::Medium::line;
  m.geometry = t.choice("geometry", {"one-way", "midpoint"}).value_or(0) == 0 ? link::Geometry::one_way
                                                                                : link::Geometry::midpoint;

  if (const auto d = t.table("direct")) {
    d->only({"a", "b"});
    m.direct = link::DirectChannels{read_channel(*d, "a"), read_channel(*d, "b")};
    if (t.has("distance_m"))
      t.fail("distance_m", "no distance axis with [link.direct]", "the measured channels replace the distance");
    out.distances_m = {0.0};
  } else {
    const auto p = t.param("distance_m", non_negative);
    if (!p) t.missing("distance_m", "a number >= 0, a non-empty list of such numbers or a { from, to, points } table");
    out.distances_m = p->values;
  }

  // Tables that only one medium uses are refused with the other, rather than ignored.
  const char* air_only = "no such table with medium = \"line\"";
  if (const auto a = t.table("antenna")) {
    if (m.medium != link::Medium::air) t.fail("antenna", air_only, "antennas radiate into open air");
    m.antenna = read_antenna(*a);
  }
  if (const auto a = t.table("air")) {
    if (m.medium != link::Medium::air) t.fail("air", air_only, "a cryogenic line has no air path");
    m.air = read_air(*a);
  }
  if (const auto l = t.table("line")) {
    if (m.medium != link::Medium::line) t.fail("line", "no such table with medium = \"air\"", "set medium = \"line\"");
    m.line = read_line(*l);
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

std::vector<Counter> read_counters(const Table& root) {
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
    const auto gate_ns = c.number("gate_ns", positive);
    if (gate_ns) k.gate_s = *gate_ns * 1e-9;
    k.reset_s = c.number_or("reset_us", non_negative, 0.0) * 1e-6;

    if (c.has("dark_rate_hz") && c.has("dark_per_gate"))
      c.fail("dark_per_gate", "only one of dark_rate_hz and dark_per_gate");
    if (const auto rate = c.param("dark_rate_hz", non_negative)) {
      if (!gate_ns) c.missing("gate_ns", "a number > 0 (the gate length) with dark_rate_hz");
      k.dark_rate_hz = rate;
      // Poissonian dark counts of rate R over a gate t: mean R t per gate; a threshold counter
      // clicks on at least one, p = 1 - exp(-R t).
      for (double r : rate->values) {
        // A finite rate times a finite gate can overflow (1e308 Hz x 10 s): refused here, where
        // the message can name the key and the line, not later by the counter model.
        if (!std::isfinite(r * k.gate_s))
          c.fail("dark_rate_hz", "a rate whose dark counts per gate (rate x gate) are a finite number");
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
  p.only({"name", "steps"});
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
  t->only({"engine", "cutoff", "tolerance", "threads", "max_memory_mb", "max_cutoff"});
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
  n.tolerance = t->number_or("tolerance", Bounds{0.0, 1e-2, true, false}, n.tolerance);
  n.threads = static_cast<int>(t->integer("threads", 0, INT_MAX).value_or(n.threads));
  n.max_memory_mb = t->number_or("max_memory_mb", positive, n.max_memory_mb);
  n.max_cutoff = static_cast<int>(t->integer("max_cutoff", 1, max_cutoff).value_or(n.max_cutoff));
  return n;
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
  s.source = read_source(root);
  s.link = read_link(root, s.source);
  s.counters = read_counters(root);
  s.protocols = read_protocols(root, s.counters);
  s.numerics = read_numerics(root);
  s.output = read_output(root);
  return s;
}

Scenario load(const std::string& path) {
  std::error_code ec;
  std::ostringstream text;
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
