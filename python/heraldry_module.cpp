// The Python module `heraldry`: a scenario from a file or a string, the bare link's table, probe,
// run and tune, with the library code the command line uses (src/sweep, src/run, src/cli's
// preflight checks). Errors are Python exceptions carrying the command line's message:
// heraldry.InputError (a ValueError) for bad input, heraldry.WriteError (an OSError) for a file
// that could not be written. Long calls release the GIL and answer Ctrl-C (KeyboardInterrupt):
// run() at the next chunk of points, keeping its checkpoint as `heraldry run` does; tune() at the
// next evaluation; probe() once its few points are done.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <atomic>
#include <chrono>
#include <condition_variable>
#include <cmath>
#include <exception>
#include <functional>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "cli/commands.hpp"
#include "heraldry/common.hpp"
#include "heraldry/output.hpp"
#include "heraldry/point.hpp"
#include "heraldry/run.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/tune.hpp"

namespace py = pybind11;
using namespace heraldry;

namespace {

/// Thrown inside a computation that was asked to stop (tune's per-evaluation hook).
struct Interrupted : std::exception {
  const char* what() const noexcept override { return "interrupted"; }
};

/// Runs `work` on a thread of its own with the GIL released; the calling thread returns as soon
/// as it is done, and every 50 ms until then takes the GIL back and lets Python handle pending
/// signals. On Ctrl-C `on_interrupt` is called (it
/// asks the work to stop; it may be called more than once) and, once the work has returned, the
/// KeyboardInterrupt is raised. Errors of the work are rethrown on the calling thread.
template <class Result>
Result interruptible(const std::function<Result()>& work, const std::function<void()>& on_interrupt) {
  std::optional<Result> result;
  std::exception_ptr failure;
  std::mutex mutex;
  std::condition_variable finished;
  bool done = false;
  bool interrupted = false;
  {
    py::gil_scoped_release release;
    std::thread worker([&] {
      try {
        result.emplace(work());
      } catch (...) {
        failure = std::current_exception();
      }
      const std::lock_guard<std::mutex> lock(mutex);
      done = true;
      finished.notify_one();
    });
    for (;;) {
      {
        std::unique_lock<std::mutex> lock(mutex);
        if (finished.wait_for(lock, std::chrono::milliseconds(50), [&] { return done; })) break;
      }
      if (interrupted) {
        on_interrupt();
        continue;
      }
      py::gil_scoped_acquire acquire;
      if (PyErr_CheckSignals() != 0) {
        interrupted = true;
        on_interrupt();
      }
    }
    worker.join();
  }
  if (interrupted) throw py::error_already_set();
  if (failure) std::rethrow_exception(failure);
  return std::move(*result);
}

/// A figure as `probe --json` prints it: the enumeration's words, None for a figure the status
/// says the point does not have (or for a value that is not finite: JSON's null), int or float.
py::object field_value(const point::Field& f, double v, bool ok) {
  if (f.label) return py::str(f.label(v));
  if ((f.figure && !ok) || !std::isfinite(v)) return py::none();
  if (f.integer) return py::int_(static_cast<long long>(v));
  return py::float_(v);
}

/// Every field of point::result_fields() by name (the members of a protocol in probe --json).
py::dict fields_dict(const point::PointResult& r) {
  py::dict d;
  const bool ok = r.status == Status::ok;
  for (const point::Field& f : point::result_fields()) d[py::str(std::string(f.name))] = field_value(f, f.get(r), ok);
  return d;
}

py::object number_or_none(double v) { return std::isfinite(v) ? py::object(py::float_(v)) : py::object(py::none()); }

/// A loaded, validated scenario (immutable from Python).
struct PyScenario {
  std::shared_ptr<const scenario::Scenario> sc;
};

std::vector<std::string> pins_of(const py::object& set) {
  std::vector<std::string> pins;
  if (set.is_none()) return pins;
  if (py::isinstance<py::str>(set)) {
    pins.push_back(set.cast<std::string>());
  } else if (py::isinstance<py::dict>(set)) {
    for (auto item : set.cast<py::dict>()) {
      // "PROTOCOL:AXIS" -> value, written as --set takes it (every digit of the double).
      const std::string key = py::str(item.first);
      pins.push_back(key + "=" + py::str(py::repr(py::float_(item.second.cast<double>()))).cast<std::string>());
    }
  } else {
    for (auto item : set) pins.push_back(py::str(item).cast<std::string>());
  }
  return pins;
}

py::dict probe(const PyScenario& s, std::optional<double> at, const py::object& set) {
  const std::vector<std::string> pins = pins_of(set);
  const auto sc = s.sc;
  const sweep::Probe pr = interruptible<sweep::Probe>([&] { return sweep::probe(*sc, at, pins); }, [] {});
  py::dict out;
  out["distance_m"] = pr.distance_m;
  py::dict input;
  input["negativity"] = number_or_none(pr.link.negativity);
  input["log_negativity"] = number_or_none(pr.link.log_negativity);
  input["fidelity"] = number_or_none(pr.link.fidelity);
  out["input"] = input;
  py::list protocols;
  for (const auto& row : pr.protocols) {
    py::dict d;
    d["name"] = row.name;
    for (auto item : fields_dict(row.result)) d[item.first] = item.second;
    protocols.append(d);
  }
  out["protocols"] = protocols;
  return out;
}

py::dict link_table(const PyScenario& s) {
  py::dict out;
  for (const sweep::LinkColumn& c : sweep::link_columns(*s.sc))
    out[py::str(c.name)] = py::array_t<double>(static_cast<py::ssize_t>(c.values.size()), c.values.data());
  return out;
}

py::dict link_units(const PyScenario& s) {
  py::dict out;
  for (const sweep::LinkColumn& c : sweep::link_columns(*s.sc)) out[py::str(c.name)] = c.units;
  return out;
}

std::string run_scenario(const PyScenario& s, const std::string& output, int threads, bool force, bool progress,
                         double progress_seconds) {
  const auto sc = s.sc;
  run::Options ro;
  ro.output = output;
  if (threads < 0 || threads > 1024)
    throw InputError("run()", 0, "threads", std::to_string(threads), "a thread count in 1..1024 (0: [numerics] threads)");
  ro.threads = threads;
  ro.force = force;
  ro.progress = progress ? run::Options::Progress::lines : run::Options::Progress::none;
  ro.progress_seconds = progress_seconds;
  ro.version = HERALDRY_VERSION;
  // The checks `heraldry run` makes before any work.
  cli::preflight_output(*sc, ro.output.empty() ? sc->output.file : ro.output);
  (void)cli::preflight(*sc);  // grid size, swept settings, memory: what the command line checks
  const run::Summary summary = interruptible<run::Summary>([&] { return run::execute(*sc, ro); }, [] { run::request_stop(); });
  if (summary.interrupted) {
    // A stop that did not come from Ctrl-C here (none other is possible from Python): say so.
    PyErr_SetString(PyExc_KeyboardInterrupt, ("run stopped; checkpoint kept in " + summary.file).c_str());
    throw py::error_already_set();
  }
  if (summary.failed_points > 0) {
    const std::string text = std::to_string(summary.failed_points) + " of " + std::to_string(summary.total_points) +
                             " points missed the numerical budget (their status in " + summary.file + " says why)";
    if (PyErr_WarnEx(PyExc_RuntimeWarning, text.c_str(), 1) != 0) throw py::error_already_set();
  }
  return summary.file;
}

py::dict tune_scenario(const PyScenario& s, const std::string& protocol, const std::string& objective,
                       std::optional<double> at, std::optional<double> min_rate_hz,
                       std::optional<double> max_false_herald_fraction, int threads) {
  const auto sc = s.sc;
  tune::Options o;
  o.protocol = protocol;
  o.objective = tune::objective_from_string(objective);
  o.at_m = at;
  o.min_rate_hz = min_rate_hz;
  o.max_false_herald_fraction = max_false_herald_fraction;
  if (threads < 0 || threads > 1024)
    throw InputError("tune()", 0, "threads", std::to_string(threads), "a thread count in 1..1024 (0: [numerics] threads)");
  o.threads = sweep::thread_count(threads > 0 ? threads : sc->numerics.threads);
  auto stop = std::make_shared<std::atomic<bool>>(false);
  // Called after every evaluation, inside the library's own exception handling: the search ends
  // there, with no result.
  o.progress = [stop](std::size_t, std::size_t, double) {
    if (stop->load()) throw Interrupted();
  };
  // On Ctrl-C the Interrupted thrown by the hook ends tune::run; interruptible() then raises
  // the KeyboardInterrupt.
  const tune::Result r = interruptible<tune::Result>([&] { return tune::run(*sc, o); }, [stop] { stop->store(true); });
  py::dict out;
  out["protocol"] = r.protocol;
  out["objective"] = tune::to_string(r.objective);
  out["objective_units"] = tune::units(r.objective);
  out["distance_m"] = r.distance_m;
  out["feasible"] = r.feasible;
  out["evaluations"] = r.evaluations;
  out["optimum"] = r.feasible ? number_or_none(r.at_best.objective) : py::object(py::none());
  py::list params;
  for (std::size_t i = 0; i < r.knobs.size(); ++i) {
    const tune::Knob& k = r.knobs[i];
    py::dict p;
    p["name"] = k.name;
    p["units"] = k.units;
    p["lo"] = k.lo;
    p["hi"] = k.hi;
    p["value"] = r.feasible ? py::object(py::float_(r.best[i])) : py::object(py::none());
    if (r.feasible) {
      const tune::Sensitivity& sn = r.sensitivity[i];
      p["minus_5_percent"] = py::dict(py::arg("value") = sn.minus_value, py::arg("objective") = number_or_none(sn.minus_objective));
      p["plus_5_percent"] = py::dict(py::arg("value") = sn.plus_value, py::arg("objective") = number_or_none(sn.plus_objective));
    }
    params.append(p);
  }
  out["parameters"] = params;
  out["figures"] = r.feasible ? py::object(fields_dict(r.at_best)) : py::object(py::none());
  out["bare"] = py::dict(py::arg("log_negativity") = r.bare_log_negativity, py::arg("fidelity") = r.bare_fidelity);
  return out;
}

}  // namespace

PYBIND11_MODULE(heraldry, m) {
  m.doc() =
      "heraldry: heralded distillation of microwave two-mode squeezed states over lossy thermal links.\n"
      "Load a Scenario (from_file, from_string, demo), then link(), probe(), run(), tune().";
  m.attr("__version__") = HERALDRY_VERSION;

  static py::exception<InputError> input_error(m, "InputError", PyExc_ValueError);
  input_error.doc() = "Bad input: the message names the key, the value and what was expected (the CLI's exit code 2).";
  static py::exception<output::WriteError> write_error(m, "WriteError", PyExc_OSError);
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const InputError& e) {
      input_error(e.what());
    } catch (const output::WriteError& e) {
      write_error(e.what());
    }
  });

  py::class_<PyScenario>(m, "Scenario", "A validated scenario (the TOML schema of protocols/demo.toml).")
      .def_static(
          "from_file",
          [](const std::string& path) { return PyScenario{std::make_shared<const scenario::Scenario>(scenario::load(path))}; },
          py::arg("path"), "Reads and validates a scenario file (InputError naming the key otherwise).")
      .def_static(
          "from_string",
          [](const std::string& text, const std::string& name) {
            return PyScenario{std::make_shared<const scenario::Scenario>(scenario::parse(text, name))};
          },
          py::arg("text"), py::arg("name") = "<string>",
          "Parses and validates a scenario given as TOML text; `name` stands for the file in messages.")
      .def_static(
          "demo", [] { return PyScenario{std::make_shared<const scenario::Scenario>(scenario::demo())}; },
          "The built-in demo scenario (protocols/demo.toml).")
      .def_property_readonly("title", [](const PyScenario& s) { return s.sc->title; })
      .def_property_readonly("path", [](const PyScenario& s) { return s.sc->path; })
      .def_property_readonly("output_file", [](const PyScenario& s) { return s.sc->output.file; })
      .def_property_readonly("target_m", [](const PyScenario& s) { return s.sc->link.target_m; })
      .def_property_readonly("distances_m",
                             [](const PyScenario& s) {
                               const auto& g = s.sc->link.distances_m;
                               return py::array_t<double>(static_cast<py::ssize_t>(g.size()), g.data());
                             })
      .def_property_readonly("protocols",
                             [](const PyScenario& s) {
                               std::vector<std::string> names;
                               for (const auto& p : s.sc->protocols) names.push_back(p.name);
                               return names;
                             })
      .def("__repr__", [](const PyScenario& s) { return "<heraldry.Scenario \"" + s.sc->title + "\" from " + s.sc->path + ">"; })
      .def("link", &link_table,
           "The bare link's table on the distance grid: a dict of numpy arrays by column, the columns of "
           "`heraldry link --json` (distance_m, beam_dB, ..., E_N, fidelity, PLOB).")
      .def("link_units", &link_units, "The units of each column of link().")
      .def("probe", &probe, py::kw_only(), py::arg("at") = py::none(), py::arg("set") = py::none(),
           "Every protocol at one distance (default target_m), as `heraldry probe --json`: a dict with "
           "distance_m, input (the bare link) and protocols (one dict of figures each). `set` pins swept "
           "parameters: a list of \"PROTOCOL:AXIS=VALUE\" or a dict {\"PROTOCOL:AXIS\": value}.")
      .def("run", &run_scenario, py::kw_only(), py::arg("output") = "", py::arg("threads") = 0,
           py::arg("force") = false, py::arg("progress") = false, py::arg("progress_seconds") = 10.0,
           "The sweep, written to HDF5 (default: the scenario's [output] file); returns the file's path. "
           "Resumes from a checkpoint; Ctrl-C stops it keeping the checkpoint (KeyboardInterrupt).")
      .def("tune", &tune_scenario, py::kw_only(), py::arg("protocol"), py::arg("objective"), py::arg("at") = py::none(),
           py::arg("min_rate_hz") = py::none(), py::arg("max_false_herald_fraction") = py::none(),
           py::arg("threads") = 0,
           "Optimises the protocol's { tune = [lo, hi] } parameters at one distance; a dict as `heraldry tune --json`.");

  m.def(
      "result_fields",
      [] {
        py::list out;
        for (const point::Field& f : point::result_fields())
          out.append(py::dict(py::arg("name") = std::string(f.name), py::arg("units") = std::string(f.units),
                              py::arg("description") = std::string(f.description)));
        return out;
      },
      "The figures of a point (probe's members, the datasets of a protocol in the result file).");
}
