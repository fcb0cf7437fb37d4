// Exact nearest-centroid search over a fixed set of points: a k-d tree (nanoflann) for many
// centroids, a plain scan for few. Ties go to the lowest index, as a scan in index order would
// give, so the answer never depends on how the tree happens to be built.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <span>
#include <vector>

namespace tessera {

class NearestCentroid {
 public:
  enum class Method { automatic, scan, tree };

  // Copies the centroids (row-major [K * dims]); K >= 1, K < 2^32. `automatic` scans when
  // K <= scan_limit(dims), otherwise builds the tree; the others force one (for benchmarks).
  NearestCentroid(std::span<const double> centroids, std::size_t dims,
                  Method method = Method::automatic);
  ~NearestCentroid();
  NearestCentroid(NearestCentroid&&) noexcept;
  NearestCentroid& operator=(NearestCentroid&&) noexcept;

  // Index of the centroid nearest to x[0..dims).
  std::uint32_t nearest(const double* x) const;
  // Same answer, faster when `hint` (any centroid index) is likely near: its distance bounds the
  // search from the start.
  std::uint32_t nearest(const double* x, std::uint32_t hint) const;

  // The nearest centroid and the squared distances to it and to the runner-up (infinity when
  // there is a single centroid). `hint` as above.
  struct Two {
    std::uint32_t index = 0;
    double first = 0.0;
    double second = 0.0;
  };
  Two nearest_two(const double* x, std::uint32_t hint) const;

  // The min(m, K) nearest centroids in increasing distance (ties in any order): indices and
  // squared distances written to the first entries of `index` and `squared`; returns how many.
  std::size_t nearest_k(const double* x, std::size_t m, std::uint32_t* index,
                        double* squared) const;

  // Squared distance as every search computes it (summed over dimensions in order).
  double squared_distance(const double* x, std::uint32_t centroid) const;

  std::size_t size() const { return count_; }
  std::size_t dimensions() const { return dims_; }
  bool uses_tree() const { return tree_ != nullptr; }

  // Up to this many centroids a scan beats the tree: about 32 per dimension (measured with
  // bench/cvt_build for 2 to 6 dimensions).
  static constexpr std::size_t scan_limit(std::size_t dims) { return 32 * dims; }

  struct Tree;  // defined in nearest.cpp

 private:
  std::uint32_t scan(const double* x) const;
  Two scan_two(const double* x) const;

  std::vector<double> centroids_;
  std::size_t dims_ = 0;
  std::size_t count_ = 0;
  std::unique_ptr<Tree> tree_;
};

}  // namespace tessera
