// Scenario files: the shipped scenarios parse with their units converted to SI, and every
// malformed scenario of tests/bad_scenarios fails with the exact message its first line states.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "heraldry/scenario.hpp"
#include "scenario/suggest.hpp"

namespace fs = std::filesystem;
using namespace heraldry;
using namespace heraldry::scenario;

namespace {

// Relative comparison: doctest::Approx adds its scale (1 by default) to the magnitude, which
// would make small values pass on an absolute tolerance.
doctest::Approx rel(double value, double epsilon) { return doctest::Approx(value).epsilon(epsilon).scale(0.0); }

const Protocol& protocol_named(const Scenario& s, const std::string& name) {
  const auto it = std::find_if(s.protocols.begin(), s.protocols.end(),
                               [&](const Protocol& p) { return p.name == name; });
  REQUIRE(it != s.protocols.end());
  return *it;
}

// A small valid scenario whose [counters.lab] table and second protocol's step are replaced.
std::string scenario_with(const std::string& counter, const std::string& step, const std::string& link_extra = "") {
  return "[source]\nfrequency_ghz = 5\nsqueezing_db = 6\nbandwidth_mhz = 1\n"
         "[link]\nmedium = \"air\"\n" + link_extra +
         "\n[counters.lab]\n" + counter +
         "\n[[protocol]]\nname = \"p\"\nsteps = [\"link\", " + step + "]\n";
}

std::vector<fs::path> toml_files(const fs::path& dir) {
  std::vector<fs::path> files;
  for (const auto& e : fs::directory_iterator(dir))
    if (e.is_regular_file() && e.path().extension() == ".toml") files.push_back(e.path());
  std::sort(files.begin(), files.end());
  return files;
}

std::string first_line(const fs::path& p) {
  std::ifstream in(p);
  std::string line;
  std::getline(in, line);
  return line;
}

}  // namespace

TEST_CASE("the built-in demo parses and is converted to SI units") {
  const Scenario s = demo();
  CHECK(s.path == "<demo>");
  CHECK(s.text == demo_text());
  CHECK(s.title.find("Kestrel Lane") != std::string::npos);
  // 1 GHz = 1e9 Hz, 1 MHz = 1e6 Hz (SI prefixes, SI Brochure 9th ed., Table 7).
  CHECK(s.source.frequency_hz == rel(5.4e9, 1e-15));
  CHECK(s.source.bandwidth_hz == rel(2.0e6, 1e-15));
  CHECK(s.source.squeezing_r == rel(squeezing_parameter_from_db(6.0), 1e-15));  // r = dB ln(10) / 20 (closed form)
  CHECK(s.source.thermal_photons == 0.02);
  CHECK(s.link.model.frequency_hz == s.source.frequency_hz);
  CHECK(s.link.model.medium == link::Medium::air);
  CHECK(s.link.model.geometry == link::Geometry::one_way);
  // { from = 0, to = 72, points = 25 }: 25 equally spaced values, both ends included (closed form).
  REQUIRE(s.link.distances_m.size() == 25);
  CHECK(s.link.distances_m.front() == 0.0);
  CHECK(s.link.distances_m.back() == 72.0);
  for (std::size_t i = 1; i < 25; ++i)
    CHECK(s.link.distances_m[i] == rel(3.0 * static_cast<double>(i), 1e-14));
  CHECK(s.link.target_m == 50.0);
  REQUIRE(s.link.model.antenna.has_value());
  CHECK(s.link.model.antenna->diameter_m == 4.5);
  CHECK(s.link.model.antenna->interface_temperature_k == 0.05);
  // t/degC = T/K - 273.15 (SI Brochure, 9th ed., 2019, Sec. 2.3.1): 20 degC = 293.15 K.
  CHECK(s.link.model.air.temperature_k == rel(293.15, 1e-15));
  CHECK(s.link.model.air.model == link::AirModel::itu);

  const Counter* lab = s.find_counter("lab");
  REQUIRE(lab != nullptr);
  CHECK(s.find_counter("nope") == nullptr);
  CHECK(lab->kind == CounterKind::threshold);
  CHECK(lab->efficiency.first() == 0.43);
  CHECK(lab->gate_s == rel(1.0e-6, 1e-15));   // 1000 ns
  CHECK(lab->reset_s == rel(1.0e-5, 1e-15));   // 10 us
  REQUIRE(lab->dark_rate_hz.has_value());
  CHECK(lab->dark_rate_hz->first() == 85.0);
  // Poissonian dark counts: p = 1 - exp(-R t) (common practice); R = 85 /s, t = 1 us:
  // 1 - exp(-8.5e-5) = 8.49963876...e-5 (closed form).
  CHECK(lab->dark_per_gate.first() == rel(8.49963876023520e-5, 1e-12));

  REQUIRE(s.protocols.size() == 4);
  CHECK(s.protocols[0].name == "bare");
  REQUIRE(s.protocols[0].steps.size() == 1);
  CHECK(s.protocols[0].steps[0].type->name == "link");
  const Protocol& both = protocol_named(s, "subtract both");
  REQUIRE(both.steps.size() == 3);
  CHECK(both.steps[1].type->name == "tap");
  CHECK(both.steps[1].mode == Mode::A);
  CHECK(both.steps[2].mode == Mode::B);
  CHECK(both.steps[1].counter == "lab");
  CHECK(both.steps[1].param("counts").first() == 1);
  CHECK(both.steps[1].param("transmissivity").values == std::vector<double>{0.95});
  // { from = 0.86, to = 0.98, points = 5 }: a swept tap, 0.03 apart (closed form).
  const auto& swept = both.steps[2].param("transmissivity").values;
  REQUIRE(swept.size() == 5);
  for (std::size_t i = 0; i < 5; ++i) CHECK(swept[i] == rel(0.86 + 0.03 * static_cast<double>(i), 1e-14));
  CHECK(both.steps[1].line > both.steps[0].line);

  CHECK(s.numerics.engine == EngineKind::sector);
  CHECK(s.numerics.cutoff == 0);
  CHECK(s.numerics.tolerance == 1e-10);
  CHECK(s.output.file == "data_out/demo.h5");
  REQUIRE(s.output.heralds_wanted.has_value());
  CHECK(*s.output.heralds_wanted == 10000.0);
}

TEST_CASE("every shipped scenario in protocols/ parses with exactly one link step per protocol") {
  const auto files = toml_files(fs::path(HERALDRY_SOURCE_DIR) / "protocols");
  REQUIRE(files.size() >= 5);
  for (const auto& f : files) {
    CAPTURE(f.string());
    const Scenario s = load(f.string());
    CHECK(s.path == f.string());
    CHECK_FALSE(s.title.empty());
    REQUIRE_FALSE(s.protocols.empty());
    for (const auto& p : s.protocols)
      CHECK(std::count_if(p.steps.begin(), p.steps.end(),
                          [](const Step& st) { return st.type->name == "link"; }) == 1);
    CHECK_FALSE(s.link.distances_m.empty());
  }
}

TEST_CASE("the cryogenic-line scenario is a 30 m line at 0.005 dB per metre") {
  const Scenario s = load(std::string(HERALDRY_SOURCE_DIR) + "/protocols/cryo_line.toml");
  CHECK(s.link.model.medium == link::Medium::line);
  // Kurpiers et al., EPJ Quantum Technol. 4, 8 (2017): 0.005 dB/m.
  CHECK(s.link.model.line.loss_db_per_m == 0.005);
  CHECK(s.link.model.line.temperature_k == 0.05);
  CHECK(s.link.distances_m.size() == 30);
  CHECK(s.link.distances_m[1] == rel(2.0, 1e-15));   // 1, 2, ..., 30 (closed form)
  CHECK(s.link.target_m == 30.0);
  CHECK_FALSE(s.link.model.antenna.has_value());
  const Protocol& far = protocol_named(s, "subtract at the far end");
  REQUIRE(far.steps.size() == 3);
  CHECK(far.steps[1].type->name == "loss");
  // 0.2 dB of loss: 10^(-0.02) = 0.954992586021436 (closed form).
  CHECK(far.steps[1].param("transmissivity").first() == rel(0.954992586021436, 1e-14));
  CHECK(far.steps[1].param("temperature_k").first() == 0.05);
  CHECK(s.find_counter("lambda")->reset_s == rel(4.0e-7, 1e-15));
}

TEST_CASE("the subtraction scenario sweeps the tap and mixes threshold and resolving counters") {
  const Scenario s = load(std::string(HERALDRY_SOURCE_DIR) + "/protocols/subtraction.toml");
  CHECK(s.find_counter("cyclic")->kind == CounterKind::threshold);
  const Counter* r = s.find_counter("resolving");
  CHECK(r->kind == CounterKind::resolving);
  CHECK_FALSE(r->dark_rate_hz.has_value());
  CHECK(r->dark_per_gate.first() == 0.030);
  const Protocol& swept = protocol_named(s, "subtract both, swept tap (threshold)");
  const Param& t = swept.steps[1].param("transmissivity");
  REQUIRE(t.swept());
  REQUIRE(t.values.size() == 20);
  // { from = 0.80, to = 0.99, points = 20 }: step 0.01 (closed form).
  for (std::size_t i = 0; i < 20; ++i)
    CHECK(t.values[i] == rel(0.80 + 0.01 * static_cast<double>(i), 1e-14));
  CHECK(protocol_named(s, "subtract two from b").steps[1].param("counts").first() == 2);
  CHECK(s.link.distances_m == std::vector<double>{0.5, 1.0, 2.0, 4.0});
}

TEST_CASE("the amplifier scenario uses measured channels and therefore a single zero distance") {
  const Scenario s = load(std::string(HERALDRY_SOURCE_DIR) + "/protocols/amplifier.toml");
  REQUIRE(s.link.model.direct.has_value());
  CHECK(s.link.model.direct->a.transmissivity == 1.0);
  CHECK(s.link.model.direct->b.transmissivity == 0.8);
  CHECK(s.link.model.direct->b.bath_photons == 8.30e-3);
  CHECK(s.link.distances_m == std::vector<double>{0.0});
  CHECK(s.link.target_m == 0.0);
  const Step& amp = protocol_named(s, "amplify b (N = 6)").steps[1];
  CHECK(amp.type->name == "amplify");
  CHECK(amp.param("max_photons").first() == 6);
  CHECK(amp.param("gain").values.size() == 10);
  const Step& sc = protocol_named(s, "scissors on b").steps[1];
  CHECK(sc.type->name == "scissors");
  CHECK(sc.param("photon_source_efficiency").first() == 0.9);
  CHECK(sc.param("gain").first() == 1.5);
}

TEST_CASE("the addition scenario adds then subtracts on mode b") {
  const Scenario s = load(std::string(HERALDRY_SOURCE_DIR) + "/protocols/addition.toml");
  const Protocol& p = protocol_named(s, "add then subtract on b");
  REQUIRE(p.steps.size() == 3);
  CHECK(p.steps[1].type->name == "add");
  CHECK(p.steps[2].type->name == "tap");
  CHECK(p.steps[1].param("squeezing").values.size() == 6);
  // Lescanne et al., PRX 10, 021038 (2020): 1400 /s; over 10 us, p = 1 - exp(-0.014)
  // = 1.390245574...e-2 (closed form).
  CHECK(s.find_counter("transmon")->dark_per_gate.first() == rel(1.39024557371381e-2, 1e-12));
  // Defaults of [link.antenna] when a key is left out.
  CHECK(s.link.model.antenna->interface_loss == 0.0);
  CHECK(s.link.model.antenna->interface_temperature_k == 4.0);
}

TEST_CASE("ranges and lists expand inclusively, linearly or geometrically") {
  // Closed forms: linear from + (to - from) i / (n - 1); geometric from (to/from)^(i/(n-1)).
  const Scenario s = parse(
      scenario_with("kind = \"resolving\"\nefficiency = { from = 0.25, to = 0.75, points = 3 }\n"
                    "dark_per_gate = [0, 0.5, 2]",
                    "{ amplify = \"a\", gain = { from = 1, to = 100, points = 3, scale = \"log\" }, max_photons = 3 }",
                    "distance_m = { from = 1, to = 3, points = 3 }\n"),
      "ranges.toml");
  CHECK(s.link.distances_m == std::vector<double>{1.0, 2.0, 3.0});
  CHECK(s.link.target_m == 3.0);   // default: the largest distance
  CHECK(s.counters[0].efficiency.values == std::vector<double>{0.25, 0.5, 0.75});
  CHECK(s.counters[0].dark_per_gate.values == std::vector<double>{0.0, 0.5, 2.0});
  const Param& g = s.protocols[0].steps[1].param("gain");
  REQUIRE(g.values.size() == 3);
  CHECK(g.values[0] == 1.0);
  CHECK(g.values[1] == rel(10.0, 1e-14));
  CHECK(g.values[2] == 100.0);
  CHECK(s.protocols[0].steps[1].mode == Mode::A);
  CHECK(s.protocols[0].steps[1].param("max_photons").first() == 3);

  const Scenario one = parse(scenario_with("kind = \"threshold\"\nefficiency = 1",
                                           "{ tap = \"b\", transmissivity = 1, counter = \"lab\" }",
                                           "distance_m = { from = 5, to = 5, points = 1 }\n"),
                             "one.toml");
  CHECK(one.link.distances_m == std::vector<double>{5.0});
  CHECK_FALSE(one.protocols[0].steps[1].param("transmissivity").swept());
}

TEST_CASE("a dark rate becomes a click probability for a threshold counter and a mean count for a resolving one") {
  // Poissonian dark counts of rate R in a gate t: mean R t; P(at least one) = 1 - exp(-R t)
  // (common practice). R = 85 /s, t = 10 us: mean 8.5e-4, click probability
  // 1 - exp(-8.5e-4) = 8.496388523...e-4 (closed form).
  const std::string rate = "efficiency = 0.43\ndark_rate_hz = [0, 85]\ngate_ns = 10000\nreset_us = 4.5";
  const std::string step = "{ tap = \"b\", transmissivity = 0.9, counter = \"lab\" }";
  const Scenario th = parse(scenario_with("kind = \"threshold\"\n" + rate, step, "distance_m = 1\n"), "th.toml");
  const Scenario pn = parse(scenario_with("kind = \"resolving\"\n" + rate, step, "distance_m = 1\n"), "pn.toml");
  CHECK(th.counters[0].gate_s == rel(1.0e-5, 1e-15));
  CHECK(th.counters[0].reset_s == rel(4.5e-6, 1e-15));
  CHECK(th.counters[0].dark_per_gate.values[0] == 0.0);
  CHECK(th.counters[0].dark_per_gate.values[1] == rel(8.49638852332420e-4, 1e-12));
  CHECK(pn.counters[0].dark_per_gate.values[1] == rel(8.5e-4, 1e-14));
  REQUIRE(th.counters[0].dark_rate_hz.has_value());
  CHECK(th.counters[0].dark_rate_hz->values == std::vector<double>{0.0, 85.0});

  const Scenario none = parse(scenario_with("kind = \"threshold\"\nefficiency = 0.5", step, "distance_m = 1\n"), "n.toml");
  CHECK(none.counters[0].dark_per_gate.values == std::vector<double>{0.0});
  CHECK_FALSE(none.counters[0].dark_rate_hz.has_value());
}

TEST_CASE("a loss given in dB is stored as the transmissivity 10^(-dB/10)") {
  const Scenario s = parse(scenario_with("kind = \"threshold\"\nefficiency = 0.5",
                                         "{ loss = \"a\", loss_db = [0, 3, 10] }", "distance_m = 1\n"),
                           "loss.toml");
  const Step& st = s.protocols[0].steps[1];
  CHECK(st.type->name == "loss");
  const auto& t = st.param("transmissivity").values;
  REQUIRE(t.size() == 3);
  CHECK(t[0] == 1.0);
  CHECK(t[1] == rel(0.501187233627272, 1e-14));   // 10^(-0.3), closed form
  CHECK(t[2] == rel(0.1, 1e-15));                 // 10 dB, closed form
  CHECK(st.param("temperature_k").values == std::vector<double>{0.0});
  CHECK(st.type->param_index("loss_db") < 0);
}

TEST_CASE("integers are accepted where numbers are expected and defaults fill the optional tables") {
  const Scenario s = parse(scenario_with("kind = \"threshold\"\nefficiency = 1",
                                         "{ scissors = \"b\", gain = 2, counter = \"lab\" }",
                                         "distance_m = [0, 10]\ngeometry = \"midpoint\"\n[link.air]\nmodel = \"fixed\"\n"
                                         "attenuation_db_per_km = 0\ntemperature_c = 0\n"),
                           "ints.toml");
  CHECK(s.source.frequency_hz == 5.0e9);
  CHECK(s.source.bandwidth_hz == 1.0e6);
  CHECK(s.link.model.geometry == link::Geometry::midpoint);
  CHECK(s.link.model.air.model == link::AirModel::fixed);
  CHECK(s.link.model.air.fixed_db_per_km == 0.0);
  CHECK(s.link.model.air.temperature_k == 273.15);   // SI Brochure, 9th ed., Sec. 2.3.1
  CHECK(s.link.model.air.pressure_hpa == 1013.25);   // default of link::Air
  CHECK(s.protocols[0].steps[1].param("photon_source_efficiency").values == std::vector<double>{1.0});
  CHECK(s.numerics.cutoff == 0);
  CHECK(s.numerics.engine == EngineKind::sector);
  CHECK(s.numerics.max_memory_mb == 4096.0);
  CHECK(s.output.file == "data_out/result.h5");
  CHECK(s.title.empty());
}

TEST_CASE("numerics and output tables are read when given") {
  const Scenario s = parse(scenario_with("kind = \"threshold\"\nefficiency = 1",
                                         "{ add = \"b\", squeezing = 0.1, counter = \"lab\" }", "distance_m = 1\n") +
                               "[numerics]\nengine = \"dense\"\ncutoff = 24\ntolerance = 1e-8\nthreads = 2\n"
                               "max_memory_mb = 512\n[output]\nfile = \"x.h5\"\nheralds_wanted = 1e6\n",
                           "num.toml");
  CHECK(s.numerics.engine == EngineKind::dense);
  CHECK(s.numerics.cutoff == 24);
  CHECK(s.numerics.tolerance == 1e-8);
  CHECK(s.numerics.threads == 2);
  CHECK(s.numerics.max_memory_mb == 512.0);
  CHECK(s.output.file == "x.h5");
  REQUIRE(s.output.heralds_wanted.has_value());
  CHECK(*s.output.heralds_wanted == 1e6);
}

TEST_CASE("the step registry lists every kind once under its scenario name, and an unknown kind is none") {
  std::vector<std::string> names;
  for (const steps::StepType* t : steps::registry()) {
    names.emplace_back(t->name);
    CHECK(steps::find_step_type(t->name) == t);
  }
  CHECK(names == std::vector<std::string>{"link", "tap", "add", "amplify", "scissors", "loss"});
  CHECK(steps::find_step_type("subtract") == nullptr);
  CHECK(&steps::link_type() == steps::find_step_type("link"));
  // Every kind that uses a counter is a heralded kind; every Gaussian kind has its channels.
  for (const steps::StepType* t : steps::registry()) {
    CAPTURE(t->name);
    if (t->uses_counter) CHECK(t->role == steps::StepType::Role::herald);
    CHECK((t->channels != nullptr) == (t->role != steps::StepType::Role::herald));
    CHECK((t->apply_sector != nullptr) == (t->role == steps::StepType::Role::herald));
  }
}

TEST_CASE("the edit distance is Levenshtein's and suggestions stay within max(2, len/3)") {
  // Levenshtein, Sov. Phys. Dokl. 10, 707 (1966); kitten -> sitting needs 3 edits (the usual
  // textbook example, from memory): k->s, e->i, insert g.
  CHECK(detail::edit_distance("kitten", "sitting") == 3);
  CHECK(detail::edit_distance("", "abc") == 3);
  CHECK(detail::edit_distance("flaw", "lawn") == 2);
  CHECK(detail::closest("frequncy_ghz", {"squeezing_db", "frequency_ghz"}) == std::optional<std::string>("frequency_ghz"));
  CHECK_FALSE(detail::closest("colour", {"frequency_ghz", "squeezing_db"}).has_value());
  // len 3: limit 2; "tapp" -> "tap" is 1 edit.
  CHECK(detail::closest("tapp", {"tap", "add"}) == std::optional<std::string>("tap"));
  CHECK_FALSE(detail::closest("abc", {"xyz"}).has_value());
}

TEST_CASE("an unreadable file is an input error naming the path") {
  const std::string missing = std::string(HERALDRY_TEST_DATA_DIR) + "/no_such_scenario.toml";
  CHECK_THROWS_WITH_AS(load(missing), (missing + ": key '<file>': expected a readable scenario file").c_str(),
                       InputError);
  const std::string dir = std::string(HERALDRY_TEST_DATA_DIR) + "/bad_scenarios";
  CHECK_THROWS_WITH_AS(load(dir), (dir + ": key '<file>': expected a readable scenario file").c_str(), InputError);
}

TEST_CASE("every malformed scenario fails with exactly the message its first line expects") {
  const auto files = toml_files(fs::path(HERALDRY_TEST_DATA_DIR) / "bad_scenarios");
  CHECK(files.size() >= 30);
  // Every file in the folder is a case: none may lack its "# expect:" line.
  for (const auto& e : fs::directory_iterator(fs::path(HERALDRY_TEST_DATA_DIR) / "bad_scenarios")) {
    CAPTURE(e.path().string());
    CHECK(e.path().extension() == ".toml");
  }
  const std::string prefix = "# expect: ";
  for (const auto& f : files) {
    CAPTURE(f.filename().string());
    std::string expected = first_line(f);
    REQUIRE(expected.rfind(prefix, 0) == 0);
    expected.erase(0, prefix.size());
    const auto at = expected.find("{file}");
    REQUIRE(at != std::string::npos);
    expected.replace(at, 6, f.string());
    std::string got = "(no error)";
    try {
      (void)load(f.string());
    } catch (const InputError& e) {
      got = e.what();
    }
    CHECK(got == expected);
  }
}
