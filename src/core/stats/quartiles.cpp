#include "core/stats/quartiles.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <vector>

namespace tessera {
namespace {

double sorted_quantile(const std::vector<double>& x, double p) {
  if (x.empty()) return std::numeric_limits<double>::quiet_NaN();
  const double h = static_cast<double>(x.size() - 1) * std::clamp(p, 0.0, 1.0);
  const std::size_t i = static_cast<std::size_t>(std::floor(h));
  if (i + 1 >= x.size()) return x.back();
  return x[i] + (h - static_cast<double>(i)) * (x[i + 1] - x[i]);
}

}  // namespace

double quantile(std::span<const double> values, double p) {
  std::vector<double> x(values.begin(), values.end());
  std::sort(x.begin(), x.end());
  return sorted_quantile(x, p);
}

Quartiles quartiles(std::span<const double> values) {
  std::vector<double> x(values.begin(), values.end());
  std::sort(x.begin(), x.end());
  return {sorted_quantile(x, 0.25), sorted_quantile(x, 0.5), sorted_quantile(x, 0.75)};
}

}  // namespace tessera
