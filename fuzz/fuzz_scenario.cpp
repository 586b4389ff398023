// libFuzzer target: the scenario parser and validator on arbitrary bytes.
// Contract under test (include/heraldry/scenario.hpp): scenario::parse either returns a
// validated Scenario or throws heraldry::InputError. Any other exception, a crash, a hang or a
// sanitizer report is a finding. A returned scenario must also satisfy the invariants the
// rest of the program relies on without re-checking them (checked below with __builtin_trap,
// so libFuzzer keeps the input).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "heraldry/common.hpp"
#include "heraldry/scenario.hpp"

namespace {

void require(bool ok) {
  if (!ok) __builtin_trap();
}

void check_invariants(const heraldry::scenario::Scenario& sc) {
  require(!sc.link.distances_m.empty());
  for (double d : sc.link.distances_m) require(std::isfinite(d) && d >= 0.0);
  require(std::isfinite(sc.link.target_m));
  require(std::isfinite(sc.source.frequency_hz) && sc.source.frequency_hz > 0.0);
  require(std::isfinite(sc.source.squeezing_db) && sc.source.squeezing_db >= 0.0);
  require(std::isfinite(sc.source.bandwidth_hz) && sc.source.bandwidth_hz > 0.0);
  require(!sc.protocols.empty());
  for (const auto& p : sc.protocols) {
    require(!p.steps.empty());
    for (const auto& s : p.steps)
      for (const auto& [name, param] : s.params) {
        require(!param.values.empty());
        for (double v : param.values) require(std::isfinite(v));
      }
  }
  for (const auto& c : sc.counters) {
    require(!c.efficiency.values.empty() && !c.dark_per_gate.values.empty());
    for (double e : c.efficiency.values) require(e >= 0.0 && e <= 1.0);
    for (double d : c.dark_per_gate.values) require(std::isfinite(d) && d >= 0.0);
  }
  require(sc.numerics.tolerance > 0.0 && sc.numerics.max_cutoff >= 1 && sc.numerics.cutoff >= 0);
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  try {
    const auto sc = heraldry::scenario::parse(text, "fuzz.toml");
    check_invariants(sc);
  } catch (const heraldry::InputError&) {
    // The expected outcome for malformed input.
  }
  return 0;
}
