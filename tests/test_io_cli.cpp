// The command line as a user runs it: exit codes, the link table, probe's JSON.
#include <doctest/doctest.h>

#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "tool_runner.hpp"

#include <H5Cpp.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace fs = std::filesystem;
using heraldry::testing::Outcome;
using heraldry::testing::run_tool;

namespace {

std::string source(const std::string& rel) { return std::string(HERALDRY_SOURCE_DIR) + "/" + rel; }

// The number after "key": in a flat JSON text, from position `from`.
double json_value(const std::string& json, const std::string& key, std::size_t from = 0) {
  const auto at = json.find("\"" + key + "\":", from);
  REQUIRE(at != std::string::npos);
  return std::stod(json.substr(at + key.size() + 3));
}

}  // namespace

TEST_CASE("heraldry example prints the demo scenario, which check accepts") {
  const Outcome ex = run_tool("example");
  CHECK(ex.code == 0);
  CHECK(ex.output.find("[source]") != std::string::npos);
  const Outcome ck = run_tool("check \"" + source("protocols/demo.toml") + "\"");
  CHECK(ck.code == 0);
  CHECK(ck.output.find("valid scenario") != std::string::npos);
}

TEST_CASE("heraldry example explains the hardware keys, and its antenna lines are keys check accepts") {
  const Outcome ex = run_tool("example");
  REQUIRE(ex.code == 0);
  for (const char* key : {"spillover_loss", "spillover_temperature_k", "ohmic_loss_db", "physical_temperature_k",
                          "return_loss_db", "mismatch_temperature_k", "measured_squeezing_db",
                          "measured_antisqueezing_db", "[source.covariance]", "frequency_a_ghz", "added_photons"})
    CHECK(ex.output.find(key) != std::string::npos);
  // The commented antenna lines, uncommented into the demo's [link.antenna] table.
  std::string antenna, text = ex.output.substr(0, ex.output.find("# ---- More keys"));
  std::istringstream lines(ex.output);
  for (std::string line; std::getline(lines, line);)
    if (line.rfind("#   ", 0) == 0 && line.find(" = ") != std::string::npos &&
        (line.find("_loss") != std::string::npos || line.find("temperature_k") != std::string::npos))
      antenna += line.substr(4) + "\n";
  CHECK(std::count(antenna.begin(), antenna.end(), '\n') == 6);
  text.insert(text.find("[link.antenna]\n") + 15, antenna);
  const auto dir = std::filesystem::temp_directory_path() / "heraldry_example_keys";
  std::filesystem::create_directories(dir);
  const auto path = dir / "example.toml";
  std::ofstream(path) << text;
  const Outcome ck = run_tool("check \"" + path.string() + "\"");
  CAPTURE(ck.output);
  CHECK(ck.code == 0);
  std::filesystem::remove_all(dir);
}

TEST_CASE("heraldry check prints the run-time estimate, sweep plus verdict, and the times on more threads") {
  const Outcome ck = run_tool("check \"" + source("protocols/demo.toml") + "\"");
  REQUIRE(ck.code == 0);
  const auto at = ck.output.find("  estimate: ");
  REQUIRE(at != std::string::npos);
  const double total = std::stod(ck.output.substr(at + 12));
  const auto s = ck.output.find("sweep ", at), v = ck.output.find("verdict about ", at);
  REQUIRE(s != std::string::npos);
  REQUIRE(v != std::string::npos);
  const double sw = std::stod(ck.output.substr(s + 6)), vd = std::stod(ck.output.substr(v + 14));
  CHECK(total > 0.0);
  CHECK(total == doctest::Approx(sw + vd).epsilon(2e-3));  // four significant digits each
  CHECK(ck.output.find("on 8, ") != std::string::npos);
  CHECK(ck.output.find("calibrated by timing ") != std::string::npos);
}

TEST_CASE("heraldry check exits 2 with the expected message on every malformed scenario") {
  std::size_t n = 0;
  for (const auto& e : fs::directory_iterator(source("tests/bad_scenarios"))) {
    if (e.path().extension() != ".toml") continue;
    std::ifstream in(e.path());
    std::string first;
    std::getline(in, first);
    REQUIRE(first.rfind("# expect: ", 0) == 0);
    std::string expected = first.substr(10);
    const auto brace = expected.find("{file}");
    if (brace != std::string::npos) expected.replace(brace, 6, e.path().string());
    const Outcome o = run_tool("check \"" + e.path().string() + "\"");
    CAPTURE(e.path().string());
    CHECK(o.code == 2);
    CHECK(o.output.find(expected) != std::string::npos);
    ++n;
  }
  CHECK(n >= 25);
}

TEST_CASE("heraldry link prints the table and both distances for the demo") {
  const Outcome o = run_tool("link \"" + source("protocols/demo.toml") + "\"");
  CHECK(o.code == 0);
  CHECK(o.output.find("entanglement survives (E_N > 0) up to") != std::string::npos);
  CHECK(o.output.find("teleportation beats the classical 1/2 up to") != std::string::npos);
  CHECK(o.output.find("distance_m") != std::string::npos);
}

namespace {

// The numbers of the JSON array named `key` (null read as NaN).
std::vector<double> json_array(const std::string& json, const std::string& key) {
  const auto at = json.find("\"" + key + "\": [");
  REQUIRE(at != std::string::npos);
  std::vector<double> out;
  std::size_t i = at + key.size() + 5;
  while (json[i] != ']') {
    while (json[i] == ' ' || json[i] == ',') ++i;
    if (json.compare(i, 4, "null") == 0) {
      out.push_back(std::nan(""));
      i += 4;
    } else {
      std::size_t used = 0;
      out.push_back(std::stod(json.substr(i, 40), &used));
      i += used;
    }
    while (json[i] == ' ' || json[i] == ',') ++i;
  }
  return out;
}

}  // namespace

TEST_CASE("heraldry link --json holds the text table's columns with every digit of the library's values") {
  const std::string demo = source("protocols/demo.toml");
  const Outcome text = run_tool("link \"" + demo + "\"");
  const Outcome json = run_tool("link \"" + demo + "\" --json");
  REQUIRE(text.code == 0);
  REQUIRE(json.code == 0);
  const heraldry::scenario::Scenario sc = heraldry::scenario::load(demo);
  const auto& grid = sc.link.distances_m;
  const std::vector<double> d = json_array(json.output, "distance_m");
  const std::vector<double> en = json_array(json.output, "E_N");
  const std::vector<double> fid = json_array(json.output, "fidelity");
  const std::vector<double> tau_b = json_array(json.output, "tau_b");
  REQUIRE(d.size() == grid.size());
  REQUIRE(en.size() == grid.size());
  const heraldry::point::Source src = heraldry::sweep::source_of(sc);
  for (std::size_t i = 0; i < grid.size(); ++i) {
    CAPTURE(grid[i]);
    CHECK(d[i] == grid[i]);
    const heraldry::point::LinkPoint p = heraldry::point::link_point(src, sc.link.model, grid[i]);
    CHECK(en[i] == p.log_negativity);
    CHECK(fid[i] == p.fidelity);
    CHECK(tau_b[i] == p.budget.b.channel.transmissivity);
    // A loss in dB is -10 log10 of the transmissivity (definition of the decibel): the loss
    // columns add up to the path's transmissivity.
    double total_db = 0.0;
    for (const char* c : {"beam_dB", "air_dB", "rain_dB", "iface_dB", "spill_dB", "ohmic_dB", "match_dB", "line_dB"})
      total_db += json_array(json.output, c)[i];
    CHECK(std::pow(10.0, -total_db / 10.0) == doctest::Approx(tau_b[i]).epsilon(1e-9));
  }
  // Every text header is a JSON column, and the text rows print the same numbers (rounded).
  const auto header_at = text.output.find("distance_m");
  const std::string header = text.output.substr(header_at, text.output.find('\n', header_at) - header_at);
  std::size_t columns = 0;
  for (std::size_t i = 0; i < header.size();) {
    while (i < header.size() && header[i] == ' ') ++i;
    const std::size_t j = header.find(' ', i);
    const std::string name = header.substr(i, j == std::string::npos ? std::string::npos : j - i);
    CHECK(json.output.find("\"" + name + "\": [") != std::string::npos);
    ++columns;
    i = j == std::string::npos ? header.size() : j;
  }
  CHECK(columns == 19);
  const std::string first_row = text.output.substr(text.output.find('\n', header_at) + 1);
  char expect[64];
  std::snprintf(expect, sizeof expect, "%9.5f %9.5f", en[0], fid[0]);
  CHECK(first_row.substr(0, first_row.find('\n')).find(expect) != std::string::npos);
  CHECK(json.output.find("\"survival\": {\"kind\": ") != std::string::npos);
}

TEST_CASE("heraldry probe --json prints one object with every protocol's figures") {
  const Outcome o = run_tool("probe \"" + source("protocols/demo.toml") + "\" --at 1.5 --json");
  CHECK(o.code == 0);
  CHECK(json_value(o.output, "distance_m") == 1.5);
  for (const char* key : {"negativity", "log_negativity", "fidelity", "success_probability", "heralding_rate_hz",
                          "false_herald_fraction", "cutoff", "truncation_error"})
    CHECK(o.output.find(std::string("\"") + key + "\"") != std::string::npos);
  // The bare protocol reproduces the input (Gaussian) figures within the truncation tolerance.
  const double input_en = json_value(o.output, "log_negativity");
  const double bare_en = json_value(o.output, "log_negativity", o.output.find("\"name\": \"bare\""));
  CHECK(bare_en == doctest::Approx(input_en).epsilon(1e-8));
}

TEST_CASE("the result file holds the figures that probe prints at the same distance") {
  // A cold line, three distances, a bare link and a one-sided tap (tolerance 1e-8).
  const fs::path dir = fs::temp_directory_path() / ("heraldry_cli_roundtrip_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir);
  const fs::path scenario = dir / "line.toml";
  std::ofstream(scenario) << "title = \"round trip\"\n[source]\nfrequency_ghz = 6\nsqueezing_db = 4\nbandwidth_mhz = 1\n"
                             "[link]\nmedium = \"line\"\ndistance_m = [10, 40, 80]\n[link.line]\nloss_db_per_m = 0.02\n"
                             "temperature_k = 1.0\n[counters.c]\nkind = \"threshold\"\nefficiency = 0.7\n"
                             "dark_per_gate = 1e-3\n[[protocol]]\nname = \"bare\"\nsteps = [\"link\"]\n"
                             "[[protocol]]\nname = \"tap b\"\nsteps = [\"link\", { tap = \"b\", transmissivity = 0.9, "
                             "counter = \"c\" }]\n[numerics]\ntolerance = 1e-8\n";
  const fs::path result = dir / "r.h5";
  const Outcome run = run_tool("run \"" + scenario.string() + "\" -o \"" + result.string() + "\" --threads 1");
  REQUIRE(run.code == 0);
  const Outcome probe = run_tool("probe \"" + scenario.string() + "\" --at 40 --json");
  REQUIRE(probe.code == 0);
  H5::H5File f(result.string(), H5F_ACC_RDONLY);
  for (const char* name : {"bare", "tap b"}) {
    const std::size_t at = probe.output.find(std::string("\"name\": \"") + name + "\"");
    REQUIRE(at != std::string::npos);
    for (const char* key : {"success_probability", "log_negativity", "negativity", "fidelity", "false_herald_fraction"}) {
      H5::DataSet ds = f.openDataSet("/protocols/" + heraldry::scenario::file_safe_name(name) + "/" + key);
      std::vector<double> v(3);
      ds.read(v.data(), H5::PredType::NATIVE_DOUBLE);
      CAPTURE(name);
      CAPTURE(key);
      // probe prints 17 significant digits: the same double (index 1 is the 40 m point).
      CHECK(json_value(probe.output, key, at) == v[1]);
    }
  }
  fs::remove_all(dir);
}

TEST_CASE("a missing scenario file is a clear input error with exit code 2") {
  const Outcome o = run_tool("link /nonexistent/scenario.toml");
  CHECK(o.code == 2);
  CHECK(o.output.find("/nonexistent/scenario.toml") != std::string::npos);
}

TEST_CASE("with stderr redirected a run prints plain progress lines with the rate, the time left and the point") {
  // popen gives the tool a pipe, not a terminal: the batch form.
  const fs::path dir = fs::temp_directory_path() / ("heraldry_cli_progress_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  const Outcome o = run_tool("run \"" + source("protocols/cryo_line.toml") + "\" -o \"" + (dir / "r.h5").string() +
                             "\" -t 1 --progress-seconds 0.05");
  CAPTURE(o.output);
  CHECK(o.code == 0);
  CHECK(o.output.find(" points (") != std::string::npos);
  CHECK(o.output.find("points/s") != std::string::npos);
  CHECK(o.output.find("computing '") != std::string::npos);
  CHECK(o.output.find("the grid is done; computing the verdict") != std::string::npos);
  CHECK(o.output.find('\r') == std::string::npos);  // no terminal line rewriting in a log
  fs::remove_all(dir);
}

TEST_CASE("a scenario on standard input is read when the file name is -") {
  const Outcome o = run_tool("check - < \"" + source("protocols/demo.toml") + "\"");
  CHECK(o.code == 0);
  CHECK(o.output.find("<stdin>: valid scenario") != std::string::npos);
}
