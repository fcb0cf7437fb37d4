#include "core/search/variation.hpp"

#include <algorithm>

namespace tessera {

void random_genome(const Bounds& bounds, Rng& rng, std::span<double> out) {
  for (std::size_t i = 0; i < out.size(); ++i)
    out[i] = rng.uniform(bounds.lower[i], bounds.upper[i]);
}

void clip_to_bounds(std::span<double> genome, const Bounds& bounds) {
  for (std::size_t i = 0; i < genome.size(); ++i)
    genome[i] = std::clamp(genome[i], bounds.lower[i], bounds.upper[i]);
}

void gaussian_mutation(std::span<const double> parent, const Bounds& bounds, double sigma, Rng& rng,
                       std::span<double> out) {
  rng.normals(out);  // drawn in bulk first: the same deviates, in the same order, as one by one
  for (std::size_t i = 0; i < out.size(); ++i)
    out[i] = parent[i] + sigma * bounds.width(i) * out[i];
  clip_to_bounds(out, bounds);
}

void iso_line_dd(std::span<const double> x, std::span<const double> y, const Bounds& bounds,
                 double sigma_iso, double sigma_line, Rng& rng, std::span<double> out) {
  const double line = sigma_line * rng.normal();  // one draw per child: a move along (y - x)
  rng.normals(out);  // drawn in bulk first: the same deviates, in the same order, as one by one
  for (std::size_t i = 0; i < out.size(); ++i)
    out[i] = x[i] + sigma_iso * bounds.width(i) * out[i] + line * (y[i] - x[i]);
  clip_to_bounds(out, bounds);
}

}  // namespace tessera
