// "Did you mean ...?" suggestions for scenario keys and values. Internal to src/scenario; free
// of toml++ so that tests can include it.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace heraldry::scenario::detail {

/// Levenshtein distance (insertions, deletions, substitutions of bytes, each of cost 1).
std::size_t edit_distance(std::string_view a, std::string_view b);

/// The known name closest to `unknown` (ignoring ASCII case), when its edit distance is at most
/// max(2, unknown.size() / 3) and less than the longer length (no suggestion that replaces
/// every character); ties go to the first in `known`.
std::optional<std::string> closest(std::string_view unknown,
                                   const std::vector<std::string_view>& known);

}  // namespace heraldry::scenario::detail
