// Argument checks of the link module: bad values become heraldry::InputError (file empty,
// line 0, key = the parameter's name). Private to src/link.
#pragma once

#include <string>

namespace heraldry::link::detail {

/// Throws InputError("", 0, key, value, expected, hint). Kept out of line and cold: the error
/// path stays out of the kernels (and g++ 12 -O3 then does not inline the message formatting,
/// which raises a spurious -Wrestrict there).
[[noreturn, gnu::cold]] void throw_input_error(const std::string& key, double value,
                                               const std::string& expected,
                                               const std::string& hint = {});

inline void require(bool ok, const std::string& key, double value, const std::string& expected,
                    const std::string& hint = {}) {
  if (!ok) throw_input_error(key, value, expected, hint);
}

}  // namespace heraldry::link::detail
