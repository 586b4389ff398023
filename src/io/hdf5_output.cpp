// HDF5 results file. The whole file is built in memory (HDF5's core driver without a backing
// store) and written to disk by io/safe_file.cpp: a write error on a full disk surfaces here as
// an exception at the point it happens, and the file on disk is either the old one or the
// complete new one. Serial HDF5 serialises every call: this file is only used from the thread
// that runs the sweep, outside parallel regions.
#include <H5Cpp.h>
#include <hdf5_hl.h>

#include <cstring>
#include <filesystem>
#include <stdexcept>

#include "heraldry/output.hpp"
#include "io/safe_file.hpp"

namespace heraldry::output {

namespace {

namespace fs = std::filesystem;

const H5::StrType& string_type() {
  static const H5::StrType t(H5::PredType::C_S1, H5T_VARIABLE);
  return t;
}

void attr(const H5::H5Object& obj, const char* name, const std::string& value) {
  H5::DataSpace scalar(H5S_SCALAR);
  obj.createAttribute(name, string_type(), scalar).write(string_type(), value);
}
void attr(const H5::H5Object& obj, const char* name, double value) {
  H5::DataSpace scalar(H5S_SCALAR);
  obj.createAttribute(name, H5::PredType::NATIVE_DOUBLE, scalar).write(H5::PredType::NATIVE_DOUBLE, &value);
}
void attr(const H5::H5Object& obj, const char* name, long long value) {
  H5::DataSpace scalar(H5S_SCALAR);
  obj.createAttribute(name, H5::PredType::NATIVE_LLONG, scalar).write(H5::PredType::NATIVE_LLONG, &value);
}
// A parameter: a number, or the list of its swept values.
void attr(const H5::H5Object& obj, const char* name, const std::vector<double>& values) {
  if (values.size() == 1) return attr(obj, name, values.front());
  const hsize_t n = values.size();
  H5::DataSpace space(1, &n);
  obj.createAttribute(name, H5::PredType::NATIVE_DOUBLE, space).write(H5::PredType::NATIVE_DOUBLE, values.data());
}

template <class T>
const H5::PredType& native();
template <>
const H5::PredType& native<double>() { return H5::PredType::NATIVE_DOUBLE; }
template <>
const H5::PredType& native<int>() { return H5::PredType::NATIVE_INT; }
template <>
const H5::PredType& native<std::uint8_t>() { return H5::PredType::NATIVE_UINT8; }

void check(herr_t status, const char* what) {
  if (status < 0) throw std::runtime_error(std::string("HDF5 dimension scales: ") + what + " failed");
}

// Dimension scales (HDF5 High-Level DS API): `scales[i]` becomes dimension i of `ds`, labelled with
// its name, so that labelled-array readers (h5py dims, xarray) see named axes with their values.
void attach_scales(const H5::DataSet& ds, const std::vector<std::pair<H5::DataSet, std::string>>& scales) {
  for (std::size_t i = 0; i < scales.size(); ++i) {
    check(H5DSattach_scale(ds.getId(), scales[i].first.getId(), static_cast<unsigned>(i)), "attach");
    check(H5DSset_label(ds.getId(), static_cast<unsigned>(i), scales[i].second.c_str()), "label");
  }
}

template <class T>
H5::DataSet dataset(H5::Group& group, const std::string& name, const std::vector<hsize_t>& dims,
                    const std::vector<T>& data, const std::string& units, const std::string& description) {
  H5::DataSpace space(static_cast<int>(dims.size()), dims.data());
  H5::DataSet ds = group.createDataSet(name, native<T>(), space);
  if (!data.empty()) ds.write(data.data(), native<T>());
  attr(ds, "units", units);
  attr(ds, "description", description);
  return ds;
}

// An axis of a grid: a dataset of its values marked as a dimension scale.
H5::DataSet axis_scale(H5::Group& group, const sweep::Axis& ax) {
  H5::DataSet ds = dataset(group, ax.name, {ax.values.size()}, ax.values, ax.units, ax.description);
  check(H5DSset_scale(ds.getId(), ax.name.c_str()), "set scale");
  return ds;
}

// One dataset per field of the point results (flat, distance slowest), integers as integers,
// each with the grid's dimension scales.
void fields_datasets(H5::Group& group, const std::vector<hsize_t>& shape, const std::vector<point::PointResult>& points,
                     const std::vector<std::pair<H5::DataSet, std::string>>& scales,
                     const std::string& description_prefix = {}) {
  for (const point::Field& f : point::result_fields()) {
    const std::string name(f.name), units(f.units), description = description_prefix + std::string(f.description);
    H5::DataSet ds;
    if (f.integer) {
      std::vector<int> v(points.size());
      for (std::size_t i = 0; i < points.size(); ++i) v[i] = static_cast<int>(f.get(points[i]));
      ds = dataset(group, name, shape, v, units, description);
    } else {
      std::vector<double> v(points.size());
      for (std::size_t i = 0; i < points.size(); ++i) v[i] = f.get(points[i]);
      ds = dataset(group, name, shape, v, units, description);
    }
    attach_scales(ds, scales);
  }
}

std::string read_string_attr(const H5::H5Object& obj, const char* name) {
  std::string value;
  obj.openAttribute(name).read(string_type(), value);
  return value;
}

template <class T>
std::vector<T> read_dataset(const H5::Group& group, const std::string& name, std::size_t expected) {
  H5::DataSet ds = group.openDataSet(name);
  const hssize_t n = ds.getSpace().getSimpleExtentNpoints();
  if (n < 0 || static_cast<std::size_t>(n) != expected)
    throw std::runtime_error("dataset " + name + " has " + std::to_string(n) + " values, expected " +
                             std::to_string(expected));
  std::vector<T> out(expected);
  if (expected > 0) ds.read(out.data(), native<T>());
  return out;
}

const char* crossing_kind(const Crossing& c) {
  switch (c.kind) {
    case Crossing::Kind::crossed: return "crossed";
    case Crossing::Kind::never_positive: return "never";
    case Crossing::Kind::beyond_grid: return "beyond grid";
    case Crossing::Kind::never_crosses: return "never breaks";
  }
  return "?";
}

void crossing_attrs(const H5::H5Object& obj, const std::string& name, const Crossing& c) {
  attr(obj, (name + "_m").c_str(), c.distance);
  attr(obj, (name + "_kind").c_str(), std::string(crossing_kind(c)));
}

// Every status code in words: "0 ok, 1 truncation budget missed, ...".
std::string status_codes() {
  std::string s;
  for (int code = 0; code < 32; ++code) {
    const std::string words = to_string(static_cast<Status>(code));
    if (words == "unknown") continue;
    s += (s.empty() ? "" : ", ") + std::to_string(code) + " " + words;
  }
  return s;
}

const char* mode_name(Mode m) { return to_string(m); }

// The resolved settings of the run, readable without parsing the scenario text.
void write_settings(H5::H5File& file, const scenario::Scenario& sc) {
  H5::Group g = file.createGroup("/settings");
  attr(g, "description", std::string("the scenario's settings as the run used them, in SI units (swept values as arrays)"));
  H5::Group src = g.createGroup("source");
  attr(src, "frequency_hz", sc.source.frequency_hz);
  attr(src, "squeezing_r", sc.source.squeezing_r);
  attr(src, "squeezing_db", squeezing_db_from_parameter(sc.source.squeezing_r));
  attr(src, "thermal_photons", sc.source.thermal_photons);
  attr(src, "bandwidth_hz", sc.source.bandwidth_hz);
  H5::Group lk = g.createGroup("link");
  const link::LinkModel& m = sc.link.model;
  attr(lk, "medium", std::string(m.medium == link::Medium::air ? "air" : "line"));
  attr(lk, "geometry", std::string(m.geometry == link::Geometry::one_way ? "one-way" : "midpoint"));
  attr(lk, "target_m", sc.link.target_m);
  if (m.direct) {
    attr(lk, "direct_transmissivity_a", m.direct->a.transmissivity);
    attr(lk, "direct_bath_photons_a", m.direct->a.bath_photons);
    attr(lk, "direct_transmissivity_b", m.direct->b.transmissivity);
    attr(lk, "direct_bath_photons_b", m.direct->b.bath_photons);
  } else if (m.medium == link::Medium::line) {
    attr(lk, "line_loss_db_per_m", m.line.loss_db_per_m);
    attr(lk, "line_temperature_k", m.line.temperature_k);
  } else {
    attr(lk, "air_model", std::string(m.air.model == link::AirModel::itu ? "itu" : "fixed"));
    attr(lk, "air_temperature_k", m.air.temperature_k);
    attr(lk, "air_pressure_hpa", m.air.pressure_hpa);
    attr(lk, "air_water_vapour_gm3", m.air.water_vapour_gm3);
    attr(lk, "air_rain_mm_per_h", m.air.rain_mm_per_h);
    if (m.air.model == link::AirModel::fixed) attr(lk, "air_fixed_db_per_km", m.air.fixed_db_per_km);
    if (m.antenna) {
      attr(lk, "antenna_diameter_m", m.antenna->diameter_m);
      attr(lk, "antenna_aperture_efficiency", m.antenna->aperture_efficiency);
      attr(lk, "antenna_interface_loss", m.antenna->interface_loss);
      attr(lk, "antenna_interface_temperature_k", m.antenna->interface_temperature_k);
    }
  }
  H5::Group cs = g.createGroup("counters");
  for (const auto& c : sc.counters) {
    H5::Group cg = cs.createGroup(scenario::file_safe_name(c.name));
    attr(cg, "name", c.name);
    attr(cg, "kind", std::string(c.kind == steps::CounterKind::threshold ? "threshold" : "resolving"));
    attr(cg, "efficiency", c.efficiency.values);
    attr(cg, "dark_per_gate", c.dark_per_gate.values);
    // One meaning per counter kind (docs/physics.md §4.2), stated beside the value.
    attr(cg, "dark_per_gate_meaning",
         std::string(c.kind == steps::CounterKind::threshold
                         ? "probability that a gate without light clicks (threshold counter)"
                         : "mean number of Poissonian dark counts in one gate (resolving counter)"));
    if (c.dark_rate_hz) attr(cg, "dark_rate_hz", c.dark_rate_hz->values);
    attr(cg, "gate_s", c.gate_s);
    attr(cg, "reset_s", c.reset_s);
  }
  H5::Group nm = g.createGroup("numerics");
  attr(nm, "engine", std::string(sc.numerics.engine == scenario::EngineKind::dense ? "dense" : "sector"));
  attr(nm, "cutoff", sc.numerics.cutoff == 0 ? std::string("auto") : std::to_string(sc.numerics.cutoff));
  attr(nm, "tolerance", sc.numerics.tolerance);
  attr(nm, "max_cutoff", static_cast<long long>(sc.numerics.max_cutoff));
  attr(nm, "max_memory_mib", sc.numerics.max_memory_mb);
}

// A protocol's steps, one group each ("1_link", "2_tap", ...), with their resolved parameters.
void write_steps(H5::Group& g, const scenario::Protocol& proto) {
  H5::Group sg = g.createGroup("steps");
  for (std::size_t s = 0; s < proto.steps.size(); ++s) {
    const scenario::Step& step = proto.steps[s];
    H5::Group one = sg.createGroup(std::to_string(s + 1) + "_" + std::string(step.type->name));
    attr(one, "kind", std::string(step.type->name));
    if (step.type->role != steps::StepType::Role::link) attr(one, "mode", std::string(mode_name(step.mode)));
    if (step.type->uses_counter) attr(one, "counter", step.counter);
    for (std::size_t k = 0; k < step.params.size(); ++k)
      attr(one, std::string(step.type->params[k].key).c_str(), step.params[k].values);
  }
}

void write_verdict(H5::H5File& file, const verdict::Verdict& v, const sweep::Plan& plan) {
  H5::Group g = file.createGroup("/verdict");
  attr(g, "description",
       std::string("figures at the target distance; *_kind says whether the distance is a refined crossing "
                   "('crossed'), the crossing lies beyond the grid ('beyond grid', value = last grid point), the "
                   "figure was never above its reference ('never', value = first grid point) or never falls below it "
                   "('never breaks': entanglement over pure loss)"));
  attr(g, "target_m", v.target_m);
  attr(g, "measured_link", static_cast<long long>(v.measured ? 1 : 0));
  attr(g, "bare_log_negativity", v.bare_log_negativity);
  attr(g, "bare_fidelity", v.bare_fidelity);
  if (v.relay_log_negativity) {
    attr(g, "relay_log_negativity", *v.relay_log_negativity);
    attr(g, "relay_fidelity", *v.relay_fidelity);
  }
  crossing_attrs(g, "bare_survival_distance", v.survival);
  crossing_attrs(g, "bare_fidelity_half_distance", v.fidelity_half);
  for (std::size_t i = 0; i < v.protocols.size(); ++i) {
    const auto& p = v.protocols[i];
    H5::Group pg = g.createGroup(group_name(p.name));
    attr(pg, "name", p.name);
    for (const point::Field& f : point::result_fields()) {
      const double x = f.get(p.at_target);
      const std::string name(f.name);
      if (f.label)
        attr(pg, name.c_str(), std::string(f.label(x)));
      else if (f.integer)
        attr(pg, name.c_str(), static_cast<long long>(x));
      else
        attr(pg, name.c_str(), x);
    }
    attr(pg, "bare_log_negativity", p.bare_log_negativity);
    attr(pg, "bare_fidelity", p.bare_fidelity);
    crossing_attrs(pg, "breakeven_log_negativity", p.breakeven_log_negativity);
    crossing_attrs(pg, "breakeven_fidelity", p.breakeven_fidelity);
    crossing_attrs(pg, "fidelity_half", p.fidelity_half);
    if (p.breakeven_relay_log_negativity) {
      crossing_attrs(pg, "breakeven_gaussian_relay_log_negativity", *p.breakeven_relay_log_negativity);
      crossing_attrs(pg, "breakeven_gaussian_relay_fidelity", *p.breakeven_relay_fidelity);
    }
    for (const auto& [axis, value] : p.best) attr(pg, ("best_" + axis).c_str(), value);
    if (p.seconds_for_heralds) attr(pg, "seconds_for_heralds", *p.seconds_for_heralds);
    attr(pg, "failed_points", static_cast<long long>(p.failed_points));
    attr(pg, "pays_off_log_negativity", static_cast<long long>(p.pays_off_log_negativity));
    attr(pg, "pays_off_fidelity", static_cast<long long>(p.pays_off_fidelity));
    attr(pg, "summary", p.summary);
    if (!p.slice_shape.empty()) {
      // The target slice: every swept setting at the target distance (the detector trade map),
      // with the swept axes as dimension scales.
      H5::Group tg = pg.createGroup("target");
      std::string dims;
      for (const auto& a : p.slice_axes) dims += (dims.empty() ? "" : ",") + a;
      attr(tg, "dims", dims);
      attr(tg, "distance_m", v.target_m);
      H5::Group ag = tg.createGroup("axes");
      std::vector<std::pair<H5::DataSet, std::string>> scales;
      const sweep::ProtocolPlan& pp = plan.protocols.at(i);
      for (std::size_t a = 1; a < pp.axes.size(); ++a) scales.emplace_back(axis_scale(ag, pp.axes[a]), pp.axes[a].name);
      std::vector<hsize_t> shape(p.slice_shape.begin(), p.slice_shape.end());
      fields_datasets(tg, shape, p.slice, scales, "at the target distance: ");
      attach_scales(dataset(tg, "bare_log_negativity", shape, p.slice_bare_log_negativity, "ebit",
                            "log-negativity of the bare link with each setting's hardware at the target distance"),
                    scales);
    }
  }
}

// FNV-1a (64 bit) over bytes, continued from h.
std::uint64_t fnv1a(const void* data, std::size_t n, std::uint64_t h = 1469598103934665603ULL) {
  const auto* p = static_cast<const unsigned char*>(data);
  for (std::size_t i = 0; i < n; ++i) {
    h ^= p[i];
    h *= 1099511628211ULL;
  }
  return h;
}

// A checksum of the grid's data as written (every field of every point and the done masks, in
// protocol order): a checkpoint whose data changed on disk is refused instead of resumed.
std::string data_checksum(const RunData& data) {
  std::uint64_t h = 1469598103934665603ULL;
  for (const auto& t : data.protocols) {
    h = fnv1a(t.done.data(), t.done.size(), h);
    for (const point::Field& f : point::result_fields())
      for (const auto& r : t.points) {
        const double v = f.integer ? static_cast<double>(static_cast<int>(f.get(r))) : f.get(r);
        h = fnv1a(&v, sizeof v, h);
      }
  }
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(h));
  return buf;
}

// The whole file as bytes (HDF5 core driver, nothing touches the disk).
std::string build_image(const scenario::Scenario& sc, const sweep::Plan& plan, const RunData& data,
                        const Provenance& prov, bool complete) {
  H5::FileAccPropList fapl;
  fapl.setCore(1 << 20, false);
  // The default (oldest) file format: with libver bounds of 1.8 or later the image HDF5 1.10.8
  // hands out fails its own metadata checksums when read back. The data carry a checksum of
  // their own (data_checksum).
  H5::H5File file("heraldry-in-memory.h5", H5F_ACC_TRUNC, H5::FileCreatPropList::DEFAULT, fapl);
  H5::Group root = file.openGroup("/");
  attr(root, "tool", std::string("heraldry"));
  attr(root, "tool_version", prov.version);
  attr(root, "title", sc.title);
  attr(root, "scenario_path", sc.path);
  attr(root, "scenario_text", sc.text);
  attr(root, "scenario_hash", scenario_hash(sc.text));
  attr(root, "created_utc", prov.created_utc);
  attr(root, "threads", static_cast<long long>(prov.threads));
  attr(root, "ranks", static_cast<long long>(prov.ranks));
  attr(root, "engine", std::string(sc.numerics.engine == scenario::EngineKind::dense ? "dense" : "sector"));
  attr(root, "cutoff_setting", sc.numerics.cutoff == 0 ? std::string("auto") : std::to_string(sc.numerics.cutoff));
  attr(root, "tolerance", sc.numerics.tolerance);
  attr(root, "complete", static_cast<long long>(complete ? 1 : 0));
  attr(root, "status_codes", status_codes());
  attr(root, "data_checksum", data_checksum(data));
  int cmin = 0, cmax = 0;
  for (const auto& t : data.protocols)
    for (std::size_t i = 0; i < t.points.size(); ++i) {
      if (!t.done[i]) continue;
      const int c = t.points[i].cutoff;
      cmin = (cmin == 0 || c < cmin) ? c : cmin;
      cmax = std::max(cmax, c);
    }
  attr(root, "cutoff_min", static_cast<long long>(cmin));
  attr(root, "cutoff_max", static_cast<long long>(cmax));
  write_settings(file, sc);

  const sweep::Axis distance_axis =
      plan.protocols.empty()
          ? sweep::Axis{"distance_m", "m", "distance between source and receiver (one-way) or between the receivers (midpoint)",
                        sc.link.distances_m, -1, -1, ""}
          : plan.protocols.front().axes.front();
  const std::vector<hsize_t> dd{distance_axis.values.size()};
  H5::Group axes = file.createGroup("/axes");
  const std::vector<std::pair<H5::DataSet, std::string>> by_distance{{axis_scale(axes, distance_axis), "distance_m"}};

  H5::Group lg = file.createGroup("/link");
  const point::LinkTable& L = data.link;
  auto column = [&](H5::Group& g, const char* name, const std::vector<double>& values, const char* units,
                    const char* description) { attach_scales(dataset(g, name, dd, values, units, description), by_distance); };
  column(lg, "transmissivity_a", L.transmissivity_a, "1", "power transmissivity of mode a's path");
  column(lg, "transmissivity_b", L.transmissivity_b, "1", "power transmissivity of mode b's path");
  column(lg, "bath_photons_a", L.bath_photons_a, "1", "effective thermal occupation of mode a's environment");
  column(lg, "bath_photons_b", L.bath_photons_b, "1", "effective thermal occupation of mode b's environment");
  H5::Group gg = file.createGroup("/gaussian");
  column(gg, "negativity", L.negativity, "1", "negativity of the bare link's Gaussian state");
  column(gg, "log_negativity", L.log_negativity, "ebit", "log-negativity of the bare link's Gaussian state");
  column(gg, "fidelity", L.fidelity, "1", "Braunstein-Kimble unit-gain coherent-state teleportation fidelity");
  column(gg, "plob_ebits", L.plob_ebits, "ebit/use", "PLOB upper bound on two-way assisted entanglement distribution");
  column(gg, "rci_ebits", L.rci_ebits, "ebit/use", "reverse coherent information lower bound");
  if (!L.relay_log_negativity.empty()) {
    column(gg, "relay_log_negativity", L.relay_log_negativity, "ebit",
           "log-negativity with a relay at the midpoint (Gaussian entanglement swapping of two pairs)");
    column(gg, "relay_fidelity", L.relay_fidelity, "1",
           "teleportation fidelity with a relay at the midpoint (Gaussian entanglement swapping)");
  }

  H5::Group pgs = file.createGroup("/protocols");
  attr(pgs, "description", std::string("one group per protocol, named after the protocol (file-safe form; the "
                                        "name itself in the group's `name` attribute)"));
  for (std::size_t p = 0; p < plan.protocols.size(); ++p) {
    const auto& pp = plan.protocols[p];
    const ProtocolTable& t = data.protocols.at(p);
    H5::Group g = pgs.createGroup(group_name(pp.name));
    attr(g, "name", pp.name);
    std::string dims;
    for (const auto& ax : pp.axes) dims += (dims.empty() ? "" : ",") + ax.name;
    attr(g, "dims", dims);
    if (p < sc.protocols.size()) write_steps(g, sc.protocols[p]);
    if (p < sc.protocols.size() && sc.protocols[p].relay) {
      // A relay protocol: its figures are those of the swapped pair the station hands on.
      H5::Group rg = g.createGroup("relay");
      attr(rg, "bell_efficiency", sc.protocols[p].relay->bell_efficiency);
      attr(rg, "gain", sc.protocols[p].relay->gain);
      attr(rg, "description",
           std::string("a relay station at the midpoint: the steps run on each of two identical arms (source at "
                       "each end, mode b over half the distance), then a unit-gain CV Bell-measurement swap of the two "
                       "heralded pairs; figures of the outcome-averaged state of the two a modes; "
                       "success_probability = P_arm^2 and heralding_rate_hz = trial rate x P_arm^2: both arms must "
                       "herald in the same trial (no quantum memory)"));
    }
    H5::Group ag = g.createGroup("axes");
    std::vector<std::pair<H5::DataSet, std::string>> scales;
    for (const auto& ax : pp.axes) scales.emplace_back(axis_scale(ag, ax), ax.name);
    std::vector<hsize_t> shape;
    for (auto s : pp.shape()) shape.push_back(s);
    fields_datasets(g, shape, t.points, scales);
    attach_scales(dataset(g, "done", shape, t.done, "1", "1 where the point has been computed"), scales);
  }
  if (data.verdict) write_verdict(file, *data.verdict, plan);
  file.flush(H5F_SCOPE_GLOBAL);
  const ssize_t size = H5Fget_file_image(file.getId(), nullptr, 0);
  if (size <= 0) throw std::runtime_error("HDF5 could not give the file image");
  std::string bytes(static_cast<std::size_t>(size), '\0');
  if (H5Fget_file_image(file.getId(), bytes.data(), bytes.size()) != size)
    throw std::runtime_error("HDF5 gave a file image of another size");
  return bytes;
}

}  // namespace

std::string scenario_hash(const std::string& text) {
  const std::uint64_t h = fnv1a(text.data(), text.size());
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(h));
  return buf;
}

std::string group_name(const std::string& protocol_name) { return scenario::file_safe_name(protocol_name); }

RunData empty_run(const sweep::Plan& plan) {
  RunData d;
  for (const auto& p : plan.protocols) {
    ProtocolTable t;
    t.points.resize(p.size());
    t.done.assign(p.size(), 0);
    d.protocols.push_back(std::move(t));
  }
  return d;
}

void write_file(const std::string& path, const scenario::Scenario& sc, const sweep::Plan& plan, const RunData& data,
                const Provenance& prov, bool complete) {
  H5::Exception::dontPrint();
  const fs::path target(path);
  const fs::path folder = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::error_code ec;
  if (!fs::is_directory(folder, ec))
    throw WriteError("cannot write " + path + ": folder " + folder.string() + " does not exist");
  std::string bytes;
  try {
    bytes = build_image(sc, plan, data, prov, complete);
  } catch (const H5::Exception& e) {
    throw WriteError("cannot write " + path + ": " + e.getDetailMsg());
  }
  detail::write_atomically(path, bytes);
}

bool read_checkpoint(const std::string& path, const scenario::Scenario& sc, const sweep::Plan& plan, RunData& data) {
  H5::Exception::dontPrint();
  std::error_code ec;
  if (!fs::exists(path, ec)) return false;
  try {
    H5::H5File file(path, H5F_ACC_RDONLY);
    H5::Group root = file.openGroup("/");
    const std::string hash = read_string_attr(root, "scenario_hash");
    if (hash != scenario_hash(sc.text))
      throw InputError(path, 0, "scenario_hash", hash,
                       "the checkpoint of this scenario (" + scenario_hash(sc.text) + ")",
                       "the scenario changed since this checkpoint was written; delete " + path +
                           " or give the run another [output] file");
    const std::string checksum = root.attrExists("data_checksum") ? read_string_attr(root, "data_checksum") : "";
    data = empty_run(plan);
    H5::Group pgs = file.openGroup("/protocols");
    for (std::size_t p = 0; p < plan.protocols.size(); ++p) {
      const auto& pp = plan.protocols[p];
      H5::Group g = pgs.openGroup(group_name(pp.name));
      const std::size_t n = pp.size();
      ProtocolTable& t = data.protocols[p];
      t.done = read_dataset<std::uint8_t>(g, "done", n);
      for (const point::Field& f : point::result_fields()) {
        const std::string name(f.name);
        if (f.integer) {
          const auto v = read_dataset<int>(g, name, n);
          for (std::size_t i = 0; i < n; ++i) f.set(t.points[i], v[i]);
        } else {
          const auto v = read_dataset<double>(g, name, n);
          for (std::size_t i = 0; i < n; ++i) f.set(t.points[i], v[i]);
        }
      }
    }
    if (checksum != data_checksum(data))
      throw InputError(path, 0, "<checkpoint>", "", "a checkpoint whose data match their checksum",
                       "the data on disk changed since they were written (checksum " + data_checksum(data) +
                           ", recorded " + (checksum.empty() ? std::string("none") : checksum) +
                           "); delete it to start afresh");
  } catch (const H5::Exception& e) {
    throw InputError(path, 0, "<checkpoint>", "", "a readable checkpoint of this scenario's grid",
                     e.getDetailMsg() + "; delete it to start afresh");
  } catch (const std::runtime_error& e) {
    if (dynamic_cast<const InputError*>(&e)) throw;
    throw InputError(path, 0, "<checkpoint>", "", "a checkpoint of this scenario's grid",
                     std::string(e.what()) + "; delete it to start afresh");
  }
  return true;
}

}  // namespace heraldry::output
