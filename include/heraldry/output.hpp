// Results of a run and their HDF5 file (layout: README "The result file"; every dataset carries
// `units` and `description`; a protocol's datasets are the fields of point::result_fields()). Files are written to a temporary name and renamed when complete,
// so a reader never sees a half-written file. A checkpoint is the same layout plus a `done`
// mask per protocol, in RESULT.h5.partial.
#pragma once

#include <cstdint>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "heraldry/point.hpp"
#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "heraldry/verdict.hpp"

namespace heraldry::output {

using sweep::ProtocolTable;

struct RunData {
  point::LinkTable link;
  std::vector<ProtocolTable> protocols;
  std::optional<verdict::Verdict> verdict;
};

/// A result or checkpoint that could not be written (disk full, no permission, a folder that
/// vanished): the command line exits with code 4; the file on disk is the previous one, intact.
class WriteError : public std::runtime_error {
public:
  using std::runtime_error::runtime_error;
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

/// Writes `path` atomically: the file is built in memory, written to a fresh temporary name in
/// the same folder (created exclusively, never through a symlink), flushed to disk and renamed
/// over `path`. Throws WriteError with the path and the reason when the folder is missing, not
/// writable, or the disk is full; `path` is then left as it was.
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
