#include "core/archive/space.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace tessera {

DescriptorSpace::DescriptorSpace(Bounds bounds, std::vector<std::string> names)
    : bounds_(std::move(bounds)), names_(std::move(names)) {
  check_bounds(bounds_, "descriptor space");
  if (names_.size() != bounds_.size())
    throw std::invalid_argument("descriptor space: " + std::to_string(names_.size()) +
                                " names for " + std::to_string(bounds_.size()) + " dimensions");
}

bool DescriptorSpace::clamp(std::span<double> descriptor) const {
  bool moved = false;
  for (std::size_t i = 0; i < descriptor.size(); ++i) {
    const double c = std::clamp(descriptor[i], bounds_.lower[i], bounds_.upper[i]);
    if (c != descriptor[i]) {
      descriptor[i] = c;
      moved = true;
    }
  }
  return moved;
}

GridSpace::GridSpace(Bounds bounds, std::vector<std::string> names,
                     std::vector<std::int64_t> resolution)
    : DescriptorSpace(std::move(bounds), std::move(names)), resolution_(std::move(resolution)) {
  if (resolution_.size() != dimensions())
    throw std::invalid_argument("grid: " + std::to_string(resolution_.size()) +
                                " resolutions for " + std::to_string(dimensions()) +
                                " descriptor dimensions");
  cells_ = 1;
  for (auto r : resolution_) {
    if (r < 1) throw std::invalid_argument("grid: every resolution must be at least 1");
    if (cells_ > kMaxCells / r)
      throw std::invalid_argument("grid: more than 2^28 cells; lower the resolution");
    cells_ *= r;
  }
}

CellLookup GridSpace::cell_of(std::span<const double> descriptor) const {
  CellLookup out;
  std::int64_t flat = 0;
  const auto& b = bounds();
  for (std::size_t i = 0; i < resolution_.size(); ++i) {
    const double d = descriptor[i];
    if (d < b.lower[i] || d > b.upper[i]) out.clamped = true;
    // No floor: truncation equals it where it is used (scaled >= 0 by then), and floor(s) >= n
    // exactly when s >= n for a whole n. x86-64's baseline has no rounding instruction, so
    // floor was a library call per dimension.
    const double scaled = (d - b.lower[i]) / b.width(i) * static_cast<double>(resolution_[i]);
    std::int64_t k;
    if (!(scaled >= 0.0)) {
      k = 0;  // also catches NaN, though NaN never reaches here (invalid candidates)
    } else if (scaled >= static_cast<double>(resolution_[i])) {
      k = resolution_[i] - 1;  // the exact upper bound belongs to the last cell
    } else {
      k = static_cast<std::int64_t>(scaled);
    }
    flat = flat * resolution_[i] + k;
  }
  out.cell = flat;
  return out;
}

std::vector<std::int64_t> GridSpace::unflatten(std::int64_t cell) const {
  std::vector<std::int64_t> idx(resolution_.size());
  for (std::size_t i = resolution_.size(); i-- > 0;) {
    idx[i] = cell % resolution_[i];
    cell /= resolution_[i];
  }
  return idx;
}

}  // namespace tessera
