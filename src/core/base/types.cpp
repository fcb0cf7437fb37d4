#include "core/base/types.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace tessera {

void check_bounds(const Bounds& bounds, const std::string& what) {
  if (bounds.lower.size() != bounds.upper.size())
    throw std::invalid_argument(what + ": lower and upper bounds have different lengths");
  if (bounds.lower.empty()) throw std::invalid_argument(what + ": no dimensions");
  for (std::size_t i = 0; i < bounds.size(); ++i) {
    if (!std::isfinite(bounds.lower[i]) || !std::isfinite(bounds.upper[i]))
      throw std::invalid_argument(what + ": bound " + std::to_string(i) + " is not finite");
    if (!(bounds.lower[i] < bounds.upper[i]))
      throw std::invalid_argument(what + ": lower >= upper in dimension " + std::to_string(i));
  }
}

void Batch::resize(std::size_t n, std::size_t g, std::size_t d, std::size_t e) {
  count = n;
  genome_size = g;
  descriptor_size = d;
  extra_size = e;
  genomes.assign(n * g, 0.0);
  fitness.assign(n, 0.0);
  descriptors.assign(n * d, 0.0);
  valid.assign(n, 0);
  extras.assign(n * e, 0.0);
}

void Batch::reshape(std::size_t n, std::size_t g, std::size_t d, std::size_t e) {
  count = n;
  genome_size = g;
  descriptor_size = d;
  extra_size = e;
  genomes.resize(n * g);
  fitness.resize(n);
  descriptors.resize(n * d);
  valid.resize(n);
  extras.resize(n * e);
}

void Batch::clear_results(std::size_t first, std::size_t count_) {
  std::fill_n(fitness.begin() + first, count_, 0.0);
  std::fill_n(descriptors.begin() + first * descriptor_size, count_ * descriptor_size, 0.0);
  std::fill_n(valid.begin() + first, count_, 0);
  std::fill_n(extras.begin() + first * extra_size, count_ * extra_size, 0.0);
}

}  // namespace tessera
