// Area covered: the arena is rastered into square cells of side `cell`; a cell is free unless a
// wall passes within cell/4 of its centre (walls lying on cell borders leave both sides free),
// and it counts as visited when its centre lies within the robot's radius of the path swept by
// the robot's centre. Area covered = visited free cells / free cells.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <span>
#include <vector>

#include "arena_geometry.hpp"

namespace tessera::arena {

class AreaRaster {
 public:
  AreaRaster(double width, double height, double cell, std::span<const Segment> walls)
      : cell_(cell),
        cols_(static_cast<std::size_t>(std::ceil(width / cell - 1e-9))),
        rows_(static_cast<std::size_t>(std::ceil(height / cell - 1e-9))),
        free_(cols_ * rows_, 0),
        visited_(cols_ * rows_, 0) {
    for (std::size_t j = 0; j < rows_; ++j) {
      for (std::size_t i = 0; i < cols_; ++i) {
        const Vec2 c = centre(i, j);
        bool free = c.x <= width && c.y <= height;
        for (const Segment& wall : walls)
          free = free && point_segment_distance(c, wall) > 0.25 * cell;
        free_[j * cols_ + i] = free ? 1 : 0;
        free_count_ += free ? 1 : 0;
      }
    }
  }

  void clear() {
    std::fill(visited_.begin(), visited_.end(), 0);
    visited_count_ = 0;
  }

  // Marks the free cells whose centres lie within r of the segment from a to b (a == b: a disc).
  void sweep(Vec2 a, Vec2 b, double r) {
    const Segment path{a, b};
    const double r2 = r * r;
    const auto lo = [&](double v) {
      return static_cast<std::ptrdiff_t>(std::floor((v - r) / cell_ - 0.5));
    };
    const auto hi = [&](double v) {
      return static_cast<std::ptrdiff_t>(std::ceil((v + r) / cell_ - 0.5));
    };
    const std::ptrdiff_t i0 = std::max<std::ptrdiff_t>(0, lo(std::min(a.x, b.x)));
    const std::ptrdiff_t i1 =
        std::min<std::ptrdiff_t>(static_cast<std::ptrdiff_t>(cols_) - 1, hi(std::max(a.x, b.x)));
    const std::ptrdiff_t j0 = std::max<std::ptrdiff_t>(0, lo(std::min(a.y, b.y)));
    const std::ptrdiff_t j1 =
        std::min<std::ptrdiff_t>(static_cast<std::ptrdiff_t>(rows_) - 1, hi(std::max(a.y, b.y)));
    for (std::ptrdiff_t j = j0; j <= j1; ++j) {
      for (std::ptrdiff_t i = i0; i <= i1; ++i) {
        const std::size_t k = static_cast<std::size_t>(j) * cols_ + static_cast<std::size_t>(i);
        if (!free_[k] || visited_[k]) continue;
        if (point_segment_distance2(
                centre(static_cast<std::size_t>(i), static_cast<std::size_t>(j)), path) <= r2) {
          visited_[k] = 1;
          ++visited_count_;
        }
      }
    }
  }

  std::size_t free_cells() const { return free_count_; }
  std::size_t visited_cells() const { return visited_count_; }
  double covered() const {
    return free_count_ == 0
               ? 0.0
               : static_cast<double>(visited_count_) / static_cast<double>(free_count_);
  }

 private:
  Vec2 centre(std::size_t i, std::size_t j) const {
    return {(static_cast<double>(i) + 0.5) * cell_, (static_cast<double>(j) + 0.5) * cell_};
  }

  double cell_;
  std::size_t cols_;
  std::size_t rows_;
  std::vector<std::uint8_t> free_;
  std::vector<std::uint8_t> visited_;
  std::size_t free_count_ = 0;
  std::size_t visited_count_ = 0;
};

}  // namespace tessera::arena
