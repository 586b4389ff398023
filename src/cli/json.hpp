// Minimal JSON text helpers for the commands' --json output (one object, no dependency).
#pragma once

#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "heraldry/point.hpp"

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

/// A JSON array of numbers (json_number each: null for a value that is not finite).
inline std::string json_array(const std::vector<double>& values) {
  std::string out = "[";
  for (std::size_t i = 0; i < values.size(); ++i) out += (i ? ", " : "") + json_number(values[i]);
  return out + "]";
}

/// Every field of a point's result as JSON members (no braces): "status" and "method" in words,
/// the figures null when the status says the point has none (figures of a point that missed its
/// truncation budget are kept: its status and truncation_error flag them).
inline std::string json_fields(const point::PointResult& r) {
  std::string out;
  const bool ok = has_figures(r.status) || r.status == Status::truncation_budget_missed;
  for (const point::Field& f : point::result_fields()) {
    const double v = f.get(r);
    if (!out.empty()) out += ", ";
    out += json_string(std::string(f.name)) + ": ";
    if (f.label)
      out += json_string(f.label(v));
    else if (f.figure && !ok)
      out += "null";
    else if (f.integer)
      out += std::to_string(static_cast<long long>(v));
    else
      out += json_number(v);
  }
  return out;
}

}  // namespace heraldry::cli
