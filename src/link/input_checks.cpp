#include "link/input_checks.hpp"

#include <sstream>

#include "heraldry/common.hpp"

namespace heraldry::link::detail {

void throw_input_error(const std::string& key, double value, const std::string& expected,
                       const std::string& hint) {
  std::ostringstream shown;
  shown.precision(10);
  shown << value;
  throw InputError("", 0, key, shown.str(), expected, hint);
}

}  // namespace heraldry::link::detail
