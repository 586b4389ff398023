// The command line as a user runs it: exit codes, the link table, probe's JSON.
#include <doctest/doctest.h>

#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

namespace fs = std::filesystem;

namespace {

struct Outcome {
  int code = -1;
  std::string output;  // stdout and stderr together
};

Outcome run_tool(const std::string& args) {
  const std::string cmd = std::string("\"") + HERALDRY_BINARY + "\" " + args + " 2>&1";
  Outcome o;
  FILE* pipe = ::popen(cmd.c_str(), "r");
  REQUIRE(pipe != nullptr);
  char buf[4096];
  std::size_t n;
  while ((n = std::fread(buf, 1, sizeof buf, pipe)) > 0) o.output.append(buf, n);
  const int status = ::pclose(pipe);
  o.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return o;
}

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

TEST_CASE("a missing scenario file is a clear input error with exit code 2") {
  const Outcome o = run_tool("link /nonexistent/scenario.toml");
  CHECK(o.code == 2);
  CHECK(o.output.find("/nonexistent/scenario.toml") != std::string::npos);
}
