#include "core/select/spread.hpp"

#include <algorithm>
#include <limits>

#include "core/base/point_cloud.hpp"

namespace tessera {

std::vector<std::size_t> spread_elites(const ArchiveSnapshot& s, std::size_t count) {
  const std::size_t n = s.elite_count();
  const std::size_t d = s.descriptor_size();
  std::vector<std::size_t> chosen;
  if (n == 0 || count == 0) return chosen;
  std::size_t first = 0;
  for (std::size_t i = 1; i < n; ++i)
    if (s.fitness[i] > s.fitness[first]) first = i;
  chosen.push_back(first);
  std::vector<double> scaled(n * d);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t k = 0; k < d; ++k)
      scaled[i * d + k] =
          (s.descriptor[i * d + k] - s.descriptor_bounds.lower[k]) / s.descriptor_bounds.width(k);
  // nearest[i]: squared scaled distance from elite i to the closest chosen elite.
  std::vector<double> nearest(n, std::numeric_limits<double>::infinity());
  while (chosen.size() < std::min(count, n)) {
    const double* last = &scaled[chosen.back() * d];
    std::size_t farthest = n;
    double best = -1.0;
    for (std::size_t i = 0; i < n; ++i) {
      nearest[i] = std::min(nearest[i], squared_distance(&scaled[i * d], last, d));
      if (nearest[i] > best) {
        best = nearest[i];
        farthest = i;
      }
    }
    // Every remaining elite sits on a chosen one: more would only repeat behaviours.
    if (best <= 0.0) break;
    chosen.push_back(farthest);
  }
  return chosen;
}

}  // namespace tessera
