// Selecting elites from an archive: constraint filters (minimum fitness, descriptor intervals) and
// the k elites nearest to a target descriptor. Distances are Euclidean on descriptors scaled to
// [0, 1] by the space bounds, so that no descriptor dominates the distance by its units.
//
// Constraints are applied first and a k-d tree (nanoflann) is built once per call on the elites
// that satisfy them; every query then searches only feasible elites, never the full archive.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <vector>

#include "core/archive/snapshot.hpp"
#include "core/base/types.hpp"

namespace tessera {

// lower <= descriptor[dimension] <= upper (closed interval); with `extra`, the elite's stored
// extra figure number `dimension` instead (NaN, not recorded, is never inside).
struct DescriptorInterval {
  std::size_t dimension = 0;
  double lower = 0.0;
  double upper = 0.0;
  bool extra = false;
};

// All conditions must hold. An empty filter accepts every elite.
struct EliteFilter {
  std::optional<double> min_fitness;  // fitness >= min_fitness
  std::vector<DescriptorInterval> within;

  bool empty() const { return !min_fitness && within.empty(); }
  bool accepts(const ArchiveSnapshot& snapshot, std::size_t elite) const;
};

// Rows of /elites that satisfy the filter, ascending.
std::vector<std::size_t> filter_elites(const ArchiveSnapshot& snapshot, const EliteFilter& filter);

struct Neighbour {
  std::size_t elite = 0;  // row in /elites
  double distance = 0.0;  // Euclidean, scaled descriptors
};

// Nearest-elite search over a chosen set of elites. Results come nearest first; equal distances
// are ordered by elite row, so the tree and a plain scan give the same answer.
class NearestElites {
 public:
  // `descriptors` is row-major [N * dims]; `rows` picks the elites to index (each < N). Equal
  // distances are ordered by position in `rows` (by elite row when `rows` ascends).
  NearestElites(std::span<const double> descriptors, const Bounds& bounds,
                std::vector<std::size_t> rows);
  // The elites of a snapshot that pass `filter`.
  NearestElites(const ArchiveSnapshot& snapshot, const EliteFilter& filter);
  ~NearestElites();
  NearestElites(NearestElites&&) noexcept;
  NearestElites& operator=(NearestElites&&) noexcept;

  // The min(k, size()) indexed elites nearest to `target` (unscaled, dimensions() values).
  std::vector<Neighbour> nearest(std::span<const double> target, std::size_t k) const;
  // Same answer by scanning every indexed elite: the reference the tree is checked against.
  std::vector<Neighbour> nearest_by_scan(std::span<const double> target, std::size_t k) const;

  std::size_t size() const { return rows_.size(); }
  std::size_t dimensions() const { return dims_; }

  struct Tree;  // defined in query.cpp

 private:
  std::vector<double> scale(std::span<const double> target) const;

  std::size_t dims_ = 0;
  std::vector<double> lower_;
  std::vector<double> width_;
  std::vector<std::size_t> rows_;
  std::vector<double> points_;  // scaled, [size() * dims_]
  std::unique_ptr<Tree> tree_;
};

}  // namespace tessera
