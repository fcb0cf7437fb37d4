#include "core/stats/holm.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>

namespace tessera {

std::vector<double> holm_adjust(const std::vector<double>& p) {
  std::vector<double> adjusted(p.size(), std::nan(""));
  std::vector<std::size_t> order;
  for (std::size_t i = 0; i < p.size(); ++i)
    if (!std::isnan(p[i])) order.push_back(i);
  // Stable: equal p-values keep their input order, which does not change the adjusted values.
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return p[a] < p[b]; });
  const std::size_t m = order.size();
  double running = 0.0;
  for (std::size_t j = 0; j < m; ++j) {
    const double scaled = std::min(1.0, static_cast<double>(m - j) * p[order[j]]);
    running = std::max(running, scaled);
    adjusted[order[j]] = running;
  }
  return adjusted;
}

}  // namespace tessera
