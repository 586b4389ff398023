// Results of a run and their HDF5 file (layout: DESIGN.md "HDF5 output"; every dataset carries
// `units` and `description`). Files are written to a temporary name and renamed when complete,
// so a reader never sees a half-written file. A checkpoint is the same layout plus a `done`
// mask per protocol, in RESULT.h5.partial.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "heraldry/scenario.hpp"
#include "heraldry/steps.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/verdict.hpp"

namespace heraldry::output {

/// The bare link at each distance of the grid (Gaussian layer).
struct LinkTable {
  std::vector<double> transmissivity_a, transmissivity_b, bath_photons_a, bath_photons_b;
  std::vector<double> negativity, log_negativity, fidelity, plob_ebits, rci_ebits;
  /// Baseline: a relay station at the midpoint (Gaussian entanglement swapping of two pairs,
  /// each sending one mode over half the distance); empty for measured [link.direct] channels.
  std::vector<double> relay_log_negativity, relay_fidelity;
};

struct ProtocolTable {
  std::vector<steps::PointResult> points;   // flat index, distance slowest
  std::vector<double> heralding_rate_hz;
  std::vector<std::uint8_t> done;
};

struct RunData {
  LinkTable link;
  std::vector<ProtocolTable> protocols;
  std::optional<verdict::Verdict> verdict;
};

struct Provenance {
  std::string version;
  int threads = 1;
  int ranks = 1;
  std::string created_utc;
};

/// FNV-1a 64-bit hash of the scenario text, as 16 hex digits: identifies the scenario a
/// checkpoint belongs to.
std::string scenario_hash(const std::string& text);

/// Empty tables of the right sizes, every point not done.
RunData empty_run(const sweep::Plan& plan);

/// Writes `path` atomically (path + ".tmp", then rename). Throws std::runtime_error with the
/// path and the reason when the folder is missing, not writable, or the disk is full.
void write_file(const std::string& path, const scenario::Scenario& sc, const sweep::Plan& plan,
                const RunData& data, const Provenance& prov, bool complete);

/// Reads a checkpoint written by write_file into `data`. Returns false when `path` does not
/// exist. Throws InputError when it belongs to another scenario (different hash) or its grid
/// differs.
bool read_checkpoint(const std::string& path, const scenario::Scenario& sc, const sweep::Plan& plan,
                     RunData& data);

/// HDF5 group name of a protocol ('/' is replaced, the name is kept as an attribute).
std::string group_name(const std::string& protocol_name);

}  // namespace heraldry::output
