// Minimal JSON text helpers for the commands' --json output (one object, no dependency).
#pragma once

#include <cmath>
#include <cstdio>
#include <string>

namespace heraldry::cli {

/// A JSON string literal: quotes, backslashes and control characters escaped.
inline std::string json_string(const std::string& s) {
  std::string out = "\"";
  for (char ch : s) {
    if (ch == '"' || ch == '\\') {
      out += '\\';
      out += ch;
    } else if (static_cast<unsigned char>(ch) < 0x20) {
      char buf[8];
      std::snprintf(buf, sizeof buf, "\\u%04x", ch);
      out += buf;
    } else {
      out += ch;
    }
  }
  return out + "\"";
}

/// A JSON number with every digit of the double (17 significant), or null when not finite:
/// JSON has no NaN, and the tool never prints one as a result.
inline std::string json_number(double v) {
  if (!std::isfinite(v)) return "null";
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

}  // namespace heraldry::cli
