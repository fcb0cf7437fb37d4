// Descriptor spaces: how a behaviour descriptor maps to a niche (cell) of the archive.
#pragma once

#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "core/base/types.hpp"

namespace tessera {

struct CellLookup {
  std::int64_t cell = 0;
  bool clamped = false;  // the descriptor lay outside the bounds and went to an edge cell
};

class DescriptorSpace {
 public:
  DescriptorSpace(Bounds bounds, std::vector<std::string> names);
  virtual ~DescriptorSpace() = default;

  virtual std::string kind() const = 0;  // "grid" | "cvt" | "unstructured"
  virtual std::int64_t cell_count() const = 0;
  virtual CellLookup cell_of(std::span<const double> descriptor) const = 0;

  const Bounds& bounds() const { return bounds_; }
  const std::vector<std::string>& names() const { return names_; }
  std::size_t dimensions() const { return bounds_.size(); }

  // Clamps a descriptor into the bounds in place; returns true when anything moved.
  bool clamp(std::span<double> descriptor) const;

 private:
  Bounds bounds_;
  std::vector<std::string> names_;
};

// Regular grid, resolution[i] cells along dimension i, row-major flat index (last fastest).
// Cell of d: k_i = clamp(floor((d_i - lower_i) / (upper_i - lower_i) * res_i), 0, res_i - 1).
class GridSpace final : public DescriptorSpace {
 public:
  GridSpace(Bounds bounds, std::vector<std::string> names, std::vector<std::int64_t> resolution);

  std::string kind() const override { return "grid"; }
  std::int64_t cell_count() const override { return cells_; }
  CellLookup cell_of(std::span<const double> descriptor) const override;

  const std::vector<std::int64_t>& resolution() const { return resolution_; }
  // Per-dimension indices of a flat cell index.
  std::vector<std::int64_t> unflatten(std::int64_t cell) const;

 private:
  std::vector<std::int64_t> resolution_;
  std::int64_t cells_ = 0;
};

// Largest number of cells an archive may have (dense per-cell index of 4 bytes each).
inline constexpr std::int64_t kMaxCells = std::int64_t{1} << 28;

}  // namespace tessera
