#include "heraldry/crossing.hpp"

#include <boost/math/tools/roots.hpp>
#include <boost/math/tools/toms748_solve.hpp>
#include <algorithm>
#include <cstdint>
#include <stdexcept>
#include <vector>

namespace heraldry {

Crossing last_downward_crossing(const std::function<double(double)>& f, std::span<const double> grid,
                                std::span<const double> values, double abs_tolerance) {
  if (grid.empty()) throw std::invalid_argument("last_downward_crossing: empty grid");
  if (!values.empty() && values.size() != grid.size())
    throw std::invalid_argument("last_downward_crossing: values and grid differ in size");
  std::vector<double> y(values.begin(), values.end());
  if (y.empty()) {
    y.reserve(grid.size());
    for (double x : grid) y.push_back(f(x));
  }
  if (!(y.front() > 0.0)) return {Crossing::Kind::never_positive, grid.front()};
  if (y.back() > 0.0) return {Crossing::Kind::beyond_grid, grid.back()};
  // The last grid interval [x_i, x_{i+1}] with y_i > 0 >= y_{i+1}.
  std::size_t i = grid.size() - 1;
  while (i > 0 && !(y[i - 1] > 0.0)) --i;
  double lo = grid[i - 1], hi = grid[i];
  double flo = y[i - 1], fhi = y[i];
  if (fhi == 0.0) return {Crossing::Kind::crossed, hi};
  std::uintmax_t max_iter = 200;
  auto tol = [abs_tolerance](double a, double b) { return std::abs(b - a) <= abs_tolerance; };
  auto root = boost::math::tools::toms748_solve(f, lo, hi, flo, fhi, tol, max_iter);
  return {Crossing::Kind::crossed, 0.5 * (root.first + root.second)};
}

Crossing continue_crossing(const std::function<double(double)>& f, double from, double limit, double growth,
                           double abs_tolerance) {
  if (!(growth > 0.0)) throw std::invalid_argument("continue_crossing: growth must be > 0");
  double lo = std::max(from, 1e-9), flo = f(lo);
  if (!(flo > 0.0)) return {Crossing::Kind::never_positive, lo};
  while (lo < limit) {
    const double hi = std::min(limit, lo * (1.0 + growth));
    const double fhi = f(hi);
    if (!(fhi > 0.0)) {
      const std::vector<double> grid{lo, hi}, values{flo, fhi};
      return last_downward_crossing(f, grid, values, abs_tolerance);
    }
    lo = hi;
    flo = fhi;
  }
  return {Crossing::Kind::beyond_grid, limit};
}

}  // namespace heraldry
