// The ITU-R coefficient tables compiled into the library (data/itu/*.csv, embedded by CMake),
// parsed once on first use. Private to src/link and its tests.
#pragma once

#include <array>
#include <string_view>
#include <vector>

namespace heraldry::embedded {
extern const std::string_view itu_p676_oxygen_csv;  // ITU-R P.676-13 Annex 1, Table 1
extern const std::string_view itu_p676_water_csv;   // ITU-R P.676-13 Annex 1, Table 2
extern const std::string_view itu_p838_rain_csv;    // ITU-R P.838-3, Tables 1-4
}  // namespace heraldry::embedded

namespace heraldry::link::detail {

/// One oxygen line of P.676-13 Table 1, in the table's units: f0 in GHz, a1 in kHz/hPa, a2
/// dimensionless, a3 in 1e-4 GHz/hPa, a4 dimensionless, a5 and a6 in 1e-4 /hPa.
struct OxygenLine {
  double f0, a1, a2, a3, a4, a5, a6;
};

/// One water-vapour line of P.676-13 Table 2: f0 in GHz, b1 in kHz/hPa, b2 dimensionless, b3 in
/// 1e-4 GHz/hPa, b4, b5, b6 dimensionless.
struct WaterLine {
  double f0, b1, b2, b3, b4, b5, b6;
};

/// One regression of P.838-3: y = sum_j a_j exp(-((log10 f - b_j) / c_j)^2) + m log10 f + c,
/// f in GHz; y = log10 k (k in dB/km per (mm/h)^alpha) or y = alpha.
struct RainRegression {
  struct Term {
    double a, b, c;
  };
  std::vector<Term> terms;
  double m = 0.0;
  double c = 0.0;
  double operator()(double frequency_ghz) const;
};

struct RainTables {
  RainRegression log10_k_h, log10_k_v, alpha_h, alpha_v;
};

/// The parsed tables (parsed on first call, thread-safe). Throws std::logic_error if the embedded
/// text is malformed (a build defect, not a user error).
const std::vector<OxygenLine>& oxygen_lines();  // 44 lines
const std::vector<WaterLine>& water_lines();    // 35 lines
const RainTables& rain_tables();

}  // namespace heraldry::link::detail
