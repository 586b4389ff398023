// HDF5 results file. Serial HDF5 serialises every call: this file is only used from the thread
// that runs the sweep, outside parallel regions.
#include <H5Cpp.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <stdexcept>

#include "heraldry/output.hpp"

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

template <class T>
const H5::PredType& native();
template <>
const H5::PredType& native<double>() { return H5::PredType::NATIVE_DOUBLE; }
template <>
const H5::PredType& native<int>() { return H5::PredType::NATIVE_INT; }
template <>
const H5::PredType& native<std::uint8_t>() { return H5::PredType::NATIVE_UINT8; }

template <class T>
void dataset(H5::Group& group, const std::string& name, const std::vector<hsize_t>& dims, const std::vector<T>& data,
             const std::string& units, const std::string& description) {
  H5::DataSpace space(static_cast<int>(dims.size()), dims.data());
  H5::DataSet ds = group.createDataSet(name, native<T>(), space);
  if (!data.empty()) ds.write(data.data(), native<T>());
  attr(ds, "units", units);
  attr(ds, "description", description);
}

// One dataset per field of the point results (flat, distance slowest), integers as integers.
void fields_datasets(H5::Group& group, const std::vector<hsize_t>& shape, const std::vector<point::PointResult>& points,
                     const std::string& description_prefix = {}) {
  for (const point::Field& f : point::result_fields()) {
    const std::string name(f.name), units(f.units), description = description_prefix + std::string(f.description);
    if (f.integer) {
      std::vector<int> v(points.size());
      for (std::size_t i = 0; i < points.size(); ++i) v[i] = static_cast<int>(f.get(points[i]));
      dataset(group, name, shape, v, units, description);
    } else {
      std::vector<double> v(points.size());
      for (std::size_t i = 0; i < points.size(); ++i) v[i] = f.get(points[i]);
      dataset(group, name, shape, v, units, description);
    }
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
  }
  return "?";
}

void crossing_attrs(const H5::H5Object& obj, const std::string& name, const Crossing& c) {
  attr(obj, (name + "_m").c_str(), c.distance);
  attr(obj, (name + "_kind").c_str(), std::string(crossing_kind(c)));
}

void write_verdict(H5::H5File& file, const verdict::Verdict& v) {
  H5::Group g = file.createGroup("/verdict");
  attr(g, "description",
       std::string("figures at the target distance; *_kind says whether the distance is a refined crossing "
                   "('crossed'), the crossing lies beyond the grid ('beyond grid', value = last grid point) or the "
                   "figure was never above its reference ('never', value = first grid point)"));
  attr(g, "target_m", v.target_m);
  attr(g, "bare_log_negativity", v.bare_log_negativity);
  attr(g, "bare_fidelity", v.bare_fidelity);
  if (v.relay_log_negativity) {
    attr(g, "relay_log_negativity", *v.relay_log_negativity);
    attr(g, "relay_fidelity", *v.relay_fidelity);
  }
  crossing_attrs(g, "bare_survival_distance", v.survival);
  crossing_attrs(g, "bare_fidelity_half_distance", v.fidelity_half);
  for (const auto& p : v.protocols) {
    H5::Group pg = g.createGroup(group_name(p.name));
    attr(pg, "name", p.name);
    for (const point::Field& f : point::result_fields()) {
      const double v = f.get(p.at_target);
      const std::string name(f.name);
      if (f.label)
        attr(pg, name.c_str(), std::string(f.label(v)));
      else if (f.integer)
        attr(pg, name.c_str(), static_cast<long long>(v));
      else
        attr(pg, name.c_str(), v);
    }
    crossing_attrs(pg, "breakeven_log_negativity", p.breakeven_log_negativity);
    crossing_attrs(pg, "breakeven_fidelity", p.breakeven_fidelity);
    crossing_attrs(pg, "fidelity_half", p.fidelity_half);
    for (const auto& [axis, value] : p.best) attr(pg, ("best_" + axis).c_str(), value);
    if (p.seconds_for_heralds) attr(pg, "seconds_for_heralds", *p.seconds_for_heralds);
    attr(pg, "failed_points", static_cast<long long>(p.failed_points));
    attr(pg, "pays_off_log_negativity", static_cast<long long>(p.pays_off_log_negativity));
    attr(pg, "pays_off_fidelity", static_cast<long long>(p.pays_off_fidelity));
    attr(pg, "summary", p.summary);
    if (!p.slice_shape.empty()) {
      // The target slice: every swept setting at the target distance (the detector trade map).
      H5::Group tg = pg.createGroup("target");
      std::string dims;
      for (const auto& a : p.slice_axes) dims += (dims.empty() ? "" : ",") + a;
      attr(tg, "dims", dims);
      attr(tg, "distance_m", v.target_m);
      std::vector<hsize_t> shape(p.slice_shape.begin(), p.slice_shape.end());
      fields_datasets(tg, shape, p.slice, "at the target distance: ");
    }
  }
}

}  // namespace

std::string scenario_hash(const std::string& text) {
  std::uint64_t h = 1469598103934665603ULL;
  for (unsigned char ch : text) {
    h ^= ch;
    h *= 1099511628211ULL;
  }
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(h));
  return buf;
}

std::string group_name(const std::string& protocol_name) {
  std::string g = protocol_name;
  for (char& ch : g)
    if (ch == '/') ch = '_';
  if (g.empty() || g == "." ) g = "_";
  return g;
}

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
    throw std::runtime_error("cannot write " + path + ": folder " + folder.string() + " does not exist");
  const std::string tmp = path + ".tmp";
  try {
    H5::H5File file(tmp, H5F_ACC_TRUNC);
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

    const auto& dist = plan.protocols.empty() ? sc.link.distances_m : plan.protocols.front().axes.front().values;
    const std::vector<hsize_t> dd{dist.size()};
    H5::Group axes = file.createGroup("/axes");
    dataset(axes, "distance_m", dd, dist, "m", "distance between source and receiver (one-way) or between the receivers (midpoint)");

    H5::Group lg = file.createGroup("/link");
    const point::LinkTable& L = data.link;
    dataset(lg, "transmissivity_a", dd, L.transmissivity_a, "1", "power transmissivity of mode a's path");
    dataset(lg, "transmissivity_b", dd, L.transmissivity_b, "1", "power transmissivity of mode b's path");
    dataset(lg, "bath_photons_a", dd, L.bath_photons_a, "1", "effective thermal occupation of mode a's environment");
    dataset(lg, "bath_photons_b", dd, L.bath_photons_b, "1", "effective thermal occupation of mode b's environment");
    H5::Group gg = file.createGroup("/gaussian");
    dataset(gg, "negativity", dd, L.negativity, "1", "negativity of the bare link's Gaussian state");
    dataset(gg, "log_negativity", dd, L.log_negativity, "ebit", "log-negativity of the bare link's Gaussian state");
    dataset(gg, "fidelity", dd, L.fidelity, "1", "Braunstein-Kimble unit-gain coherent-state teleportation fidelity");
    dataset(gg, "plob_ebits", dd, L.plob_ebits, "ebit/use", "PLOB upper bound on two-way assisted entanglement distribution");
    dataset(gg, "rci_ebits", dd, L.rci_ebits, "ebit/use", "reverse coherent information lower bound");
    if (!L.relay_log_negativity.empty()) {
      dataset(gg, "relay_log_negativity", dd, L.relay_log_negativity, "ebit",
              "log-negativity with a relay at the midpoint (Gaussian entanglement swapping of two pairs)");
      dataset(gg, "relay_fidelity", dd, L.relay_fidelity, "1",
              "teleportation fidelity with a relay at the midpoint (Gaussian entanglement swapping)");
    }

    H5::Group pgs = file.createGroup("/protocols");
    for (std::size_t p = 0; p < plan.protocols.size(); ++p) {
      const auto& pp = plan.protocols[p];
      const ProtocolTable& t = data.protocols.at(p);
      H5::Group g = pgs.createGroup(group_name(pp.name));
      attr(g, "name", pp.name);
      std::string dims;
      for (const auto& ax : pp.axes) dims += (dims.empty() ? "" : ",") + ax.name;
      attr(g, "dims", dims);
      H5::Group ag = g.createGroup("axes");
      for (const auto& ax : pp.axes)
        dataset(ag, ax.name, {ax.values.size()}, ax.values, ax.units, ax.description);
      std::vector<hsize_t> shape;
      for (auto s : pp.shape()) shape.push_back(s);
      fields_datasets(g, shape, t.points);
      dataset(g, "done", shape, t.done, "1", "1 where the point has been computed");
    }
    if (data.verdict) write_verdict(file, *data.verdict);
    file.close();
  } catch (const H5::Exception& e) {
    fs::remove(tmp, ec);
    throw std::runtime_error("cannot write " + path + ": " + e.getDetailMsg() +
                             (errno ? std::string(" (") + std::strerror(errno) + ")" : std::string()));
  }
  fs::rename(tmp, target, ec);
  if (ec) {
    fs::remove(tmp, ec);
    throw std::runtime_error("cannot write " + path + ": rename failed: " + ec.message());
  }
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
