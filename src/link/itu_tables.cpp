#include "link/itu_tables.hpp"

#include <charconv>
#include <cmath>
#include <stdexcept>
#include <string>

namespace heraldry::link::detail {

namespace {

// Splits the CSV text into data lines: comment lines (#) and blank lines are dropped; so is the
// column-header line, recognised by `header_prefix`.
std::vector<std::string_view> data_lines(std::string_view text, std::string_view header_prefix) {
  std::vector<std::string_view> out;
  while (!text.empty()) {
    const auto eol = text.find('\n');
    std::string_view line = text.substr(0, eol);
    text = eol == std::string_view::npos ? std::string_view{} : text.substr(eol + 1);
    while (!line.empty() && (line.back() == '\r' || line.back() == ' ')) line.remove_suffix(1);
    if (line.empty() || line.front() == '#') continue;
    if (!header_prefix.empty() && line.starts_with(header_prefix)) continue;
    out.push_back(line);
  }
  return out;
}

std::vector<std::string_view> fields(std::string_view line) {
  std::vector<std::string_view> out;
  for (;;) {
    const auto comma = line.find(',');
    out.push_back(line.substr(0, comma));
    if (comma == std::string_view::npos) break;
    line = line.substr(comma + 1);
  }
  return out;
}

[[noreturn]] void malformed(std::string_view table, std::string_view line) {
  throw std::logic_error("embedded ITU table " + std::string(table) + ": malformed line '" +
                         std::string(line) + "'");
}

double number(std::string_view table, std::string_view line, std::string_view field) {
  while (!field.empty() && field.front() == ' ') field.remove_prefix(1);
  double value = 0.0;
  const auto [end, ec] = std::from_chars(field.data(), field.data() + field.size(), value);
  if (ec != std::errc{} || end != field.data() + field.size()) malformed(table, line);
  return value;
}

template <class Line>
std::vector<Line> parse_lines(std::string_view table, std::string_view text, std::size_t expected) {
  std::vector<Line> out;
  for (const auto line : data_lines(text, "f0")) {
    const auto f = fields(line);
    if (f.size() != 7) malformed(table, line);
    std::array<double, 7> v{};
    for (std::size_t i = 0; i < 7; ++i) v[i] = number(table, line, f[i]);
    out.push_back(Line{v[0], v[1], v[2], v[3], v[4], v[5], v[6]});
  }
  if (out.size() != expected)
    throw std::logic_error("embedded ITU table " + std::string(table) + ": " +
                           std::to_string(out.size()) + " lines, expected " +
                           std::to_string(expected));
  return out;
}

RainTables parse_rain(std::string_view text) {
  constexpr std::string_view table = "P.838-3";
  RainTables t;
  auto pick = [&](std::string_view name, std::string_view line) -> RainRegression& {
    if (name == "kH") return t.log10_k_h;
    if (name == "kV") return t.log10_k_v;
    if (name == "alphaH") return t.alpha_h;
    if (name == "alphaV") return t.alpha_v;
    malformed(table, line);
  };
  for (const auto line : data_lines(text, {})) {
    const auto f = fields(line);
    if (f.size() < 3) malformed(table, line);
    RainRegression& r = pick(f[0], line);
    if (f[1] == "m" && f.size() == 3) {
      r.m = number(table, line, f[2]);
    } else if (f[1] == "c" && f.size() == 3) {
      r.c = number(table, line, f[2]);
    } else if (f.size() == 5) {
      r.terms.push_back(
          {number(table, line, f[2]), number(table, line, f[3]), number(table, line, f[4])});
    } else {
      malformed(table, line);
    }
  }
  // P.838-3: four Gaussian terms for log10 k, five for alpha.
  if (t.log10_k_h.terms.size() != 4 || t.log10_k_v.terms.size() != 4 ||
      t.alpha_h.terms.size() != 5 || t.alpha_v.terms.size() != 5)
    throw std::logic_error("embedded ITU table P.838-3: wrong number of regression terms");
  return t;
}

}  // namespace

double RainRegression::operator()(double frequency_ghz) const {
  const double x = std::log10(frequency_ghz);
  double y = m * x + c;
  for (const auto& t : terms) {
    const double u = (x - t.b) / t.c;
    y += t.a * std::exp(-u * u);
  }
  return y;
}

const std::vector<OxygenLine>& oxygen_lines() {
  static const auto lines =
      parse_lines<OxygenLine>("P.676-13 Table 1", embedded::itu_p676_oxygen_csv, 44);
  return lines;
}

const std::vector<WaterLine>& water_lines() {
  static const auto lines =
      parse_lines<WaterLine>("P.676-13 Table 2", embedded::itu_p676_water_csv, 35);
  return lines;
}

const RainTables& rain_tables() {
  static const RainTables tables = parse_rain(embedded::itu_p838_rain_csv);
  return tables;
}

}  // namespace heraldry::link::detail
