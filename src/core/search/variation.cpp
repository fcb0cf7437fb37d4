#include "core/search/variation.hpp"

#include <algorithm>

namespace tessera {

void random_genome(const Bounds& bounds, Rng& rng, std::span<double> out) {
  for (std::size_t i = 0; i < out.size(); ++i)
    out[i] = rng.uniform(bounds.lower[i], bounds.upper[i]);
}

void gaussian_mutation(std::span<const double> parent, const Bounds& bounds, double sigma, Rng& rng,
                       std::span<double> out) {
  const double* lower = bounds.lower.data();
  const double* upper = bounds.upper.data();
  rng.for_each_normal(out.size(), [&](std::size_t i, double z) {
    out[i] = std::clamp(parent[i] + sigma * (upper[i] - lower[i]) * z, lower[i], upper[i]);
  });
}

void iso_line_dd(std::span<const double> x, std::span<const double> y, const Bounds& bounds,
                 double sigma_iso, double sigma_line, Rng& rng, std::span<double> out) {
  const double line = sigma_line * rng.normal();  // one draw per child: a move along (y - x)
  const double* lower = bounds.lower.data();
  const double* upper = bounds.upper.data();
  rng.for_each_normal(out.size(), [&](std::size_t i, double z) {
    const double child = x[i] + sigma_iso * (upper[i] - lower[i]) * z + line * (y[i] - x[i]);
    out[i] = std::clamp(child, lower[i], upper[i]);
  });
}

}  // namespace tessera
