// Helpers shared by the steps suites: a reader for the reference tables and a plain one-mode
// application of a Kraus set (an independent, dense re-statement of rho -> sum K rho K^T).
#pragma once

#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "heraldry/fock.hpp"
#include "heraldry/link.hpp"
#include <cmath>

namespace steps_test {

/// The temperature at which a mode of frequency f holds n thermal photons: Planck inverted,
/// T = h f / (k_B ln(1 + 1/n)) (closed form).
inline double temperature_for_occupation(double n, double frequency_hz) {
  return heraldry::link::planck_h * frequency_hz / (heraldry::link::boltzmann_k * std::log1p(1.0 / n));
}

/// Rows of a reference CSV (lines starting with '#' are the header comment), keyed by column.
struct Table {
  std::vector<std::map<std::string, std::string>> rows;
  const std::map<std::string, std::string>& row(const std::string& case_name) const {
    for (const auto& r : rows)
      if (r.at("case") == case_name) return r;
    throw std::runtime_error("no reference row " + case_name);
  }
};

inline Table read_table(const std::string& name) {
  const std::string path = std::string(HERALDRY_TEST_DATA_DIR) + "/reference/" + name;
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path);
  Table t;
  std::vector<std::string> columns;
  std::string line;
  auto split = [](const std::string& s) {
    std::vector<std::string> out;
    std::stringstream ss(s);
    std::string cell;
    while (std::getline(ss, cell, ',')) out.push_back(cell);
    return out;
  };
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (columns.empty()) {
      columns = split(line);
      continue;
    }
    const auto cells = split(line);
    std::map<std::string, std::string> r;
    for (std::size_t i = 0; i < columns.size() && i < cells.size(); ++i) r[columns[i]] = cells[i];
    t.rows.push_back(std::move(r));
  }
  return t;
}

inline double num(const std::map<std::string, std::string>& r, const std::string& key) {
  return std::stod(r.at(key));
}

using Matrix = std::vector<std::vector<double>>;

/// sum_k K_k rho K_k^T on one mode with photon numbers 0..N; what lands above N is dropped.
inline Matrix apply(const heraldry::fock::Operation& op, const Matrix& rho) {
  const int size = static_cast<int>(rho.size());
  Matrix out(size, std::vector<double>(size, 0.0));
  for (const auto& k : op.kraus)
    for (int n = 0; n < size && n < static_cast<int>(k.coeff.size()); ++n)
      for (int m = 0; m < size && m < static_cast<int>(k.coeff.size()); ++m) {
        const int i = n + k.shift, j = m + k.shift;
        if (i < 0 || j < 0 || i >= size || j >= size) continue;
        out[i][j] += k.coeff[n] * k.coeff[m] * rho[n][m];
      }
  return out;
}

/// diag(sum_k K_k^T K_k): the probability that input |n> survives the operation.
inline std::vector<double> survival(const heraldry::fock::Operation& op, int cutoff) {
  std::vector<double> s(cutoff + 1, 0.0);
  for (const auto& k : op.kraus)
    for (int n = 0; n <= cutoff && n < static_cast<int>(k.coeff.size()); ++n) s[n] += k.coeff[n] * k.coeff[n];
  return s;
}

inline Matrix pure(const std::vector<double>& c) {
  Matrix m(c.size(), std::vector<double>(c.size()));
  for (std::size_t i = 0; i < c.size(); ++i)
    for (std::size_t j = 0; j < c.size(); ++j) m[i][j] = c[i] * c[j];
  return m;
}

inline double trace(const Matrix& m) {
  double t = 0.0;
  for (std::size_t i = 0; i < m.size(); ++i) t += m[i][i];
  return t;
}

}  // namespace steps_test
