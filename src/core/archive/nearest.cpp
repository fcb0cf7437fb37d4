#include "core/archive/nearest.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <nanoflann.hpp>
#include <stdexcept>
#include <string>
#include <utility>

#include "core/base/point_cloud.hpp"

namespace tessera {
namespace {

// One-nearest result set ordered by (distance, index). It reports a worst distance a hair above
// the best so that the tree still visits points at exactly the best distance; addPoint then keeps
// the lowest index among equals. The comparisons stay exact, only the pruning is looser.
struct LowestNearest {
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;

  double best = std::numeric_limits<double>::infinity();
  std::uint32_t index = 0;

  std::size_t size() const { return 1; }
  bool full() const { return true; }
  double worstDist() const {
    return std::nextafter(best * (1.0 + 1e-12), std::numeric_limits<double>::infinity());
  }
  bool addPoint(double dist, std::uint32_t idx) {
    if (dist < best || (dist == best && idx < index)) {
      best = dist;
      index = idx;
    }
    return true;
  }
};

// Two-nearest result set ordered by (distance, index), same visiting rule as LowestNearest.
struct LowestTwo {
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;

  double best[2] = {std::numeric_limits<double>::infinity(),
                    std::numeric_limits<double>::infinity()};
  std::uint32_t index[2] = {std::numeric_limits<std::uint32_t>::max(),
                            std::numeric_limits<std::uint32_t>::max()};

  std::size_t size() const { return 2; }
  bool full() const { return true; }
  double worstDist() const {
    return std::nextafter(best[1] * (1.0 + 1e-12), std::numeric_limits<double>::infinity());
  }
  static bool before(double d, std::uint32_t i, double d_other, std::uint32_t i_other) {
    return d < d_other || (d == d_other && i < i_other);
  }
  bool addPoint(double dist, std::uint32_t idx) {
    if (idx == index[0] || idx == index[1]) return true;  // the hint, met again in the tree
    if (before(dist, idx, best[0], index[0])) {
      best[1] = best[0];
      index[1] = index[0];
      best[0] = dist;
      index[0] = idx;
    } else if (before(dist, idx, best[1], index[1])) {
      best[1] = dist;
      index[1] = idx;
    }
    return true;
  }
};

}  // namespace

struct NearestCentroid::Tree {
  virtual ~Tree() = default;
  virtual void search(const double* x, LowestNearest& result) const = 0;
  virtual void search(const double* x, LowestTwo& result) const = 0;
  virtual void search(const double* x,
                      nanoflann::KNNResultSet<double, std::uint32_t>& result) const = 0;
};

namespace {

// Points per k-d tree leaf: 16 beat 4, 8 and 32 on uniform centroids in 2 to 6 dimensions.
constexpr std::size_t kLeafSize = 16;

template <int Dim>
class TreeOf final : public NearestCentroid::Tree {
 public:
  using Metric = nanoflann::L2_Simple_Adaptor<double, PointCloud, double, std::uint32_t>;
  using Index = nanoflann::KDTreeSingleIndexAdaptor<Metric, PointCloud, Dim, std::uint32_t>;

  TreeOf(PointCloud cloud)
      : cloud_(cloud),
        index_(static_cast<int>(cloud.dims), cloud_,
               nanoflann::KDTreeSingleIndexAdaptorParams(kLeafSize)) {}

  void search(const double* x, LowestNearest& result) const override {
    index_.findNeighbors(result, x, nanoflann::SearchParams());
  }
  void search(const double* x, LowestTwo& result) const override {
    index_.findNeighbors(result, x, nanoflann::SearchParams());
  }
  void search(const double* x,
              nanoflann::KNNResultSet<double, std::uint32_t>& result) const override {
    index_.findNeighbors(result, x, nanoflann::SearchParams());
  }

 private:
  PointCloud cloud_;
  Index index_;
};

}  // namespace

NearestCentroid::NearestCentroid(std::span<const double> centroids, std::size_t dims, Method method)
    : centroids_(centroids.begin(), centroids.end()), dims_(dims) {
  if (dims_ == 0 || centroids_.empty() || centroids_.size() % dims_ != 0)
    throw std::invalid_argument("nearest centroid: " + std::to_string(centroids_.size()) +
                                " values do not form centroids of dimension " +
                                std::to_string(dims_));
  count_ = centroids_.size() / dims_;
  if (count_ > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("nearest centroid: too many centroids");
  const bool tree =
      method == Method::tree || (method == Method::automatic && count_ > scan_limit(dims_));
  if (tree) tree_ = make_tree_for_dimension<TreeOf, Tree>({centroids_.data(), count_, dims_});
}

NearestCentroid::~NearestCentroid() = default;
NearestCentroid::NearestCentroid(NearestCentroid&&) noexcept = default;
NearestCentroid& NearestCentroid::operator=(NearestCentroid&&) noexcept = default;

double NearestCentroid::squared_distance(const double* x, std::uint32_t centroid) const {
  return tessera::squared_distance(x, centroids_.data() + centroid * dims_, dims_);
}

std::uint32_t NearestCentroid::scan(const double* x) const {
  double best = std::numeric_limits<double>::infinity();
  std::uint32_t index = 0;
  for (std::size_t k = 0; k < count_; ++k) {
    const double d = tessera::squared_distance(x, centroids_.data() + k * dims_, dims_);
    if (d < best) {  // strict: the first (lowest) index wins ties
      best = d;
      index = static_cast<std::uint32_t>(k);
    }
  }
  return index;
}

std::uint32_t NearestCentroid::nearest(const double* x) const {
  if (!tree_) return scan(x);
  LowestNearest result;
  tree_->search(x, result);
  return result.index;
}

std::uint32_t NearestCentroid::nearest(const double* x, std::uint32_t hint) const {
  if (!tree_) return scan(x);
  LowestNearest result;
  result.best = squared_distance(x, hint);
  result.index = hint;
  tree_->search(x, result);
  return result.index;
}

NearestCentroid::Two NearestCentroid::scan_two(const double* x) const {
  LowestTwo result;
  for (std::size_t k = 0; k < count_; ++k)
    result.addPoint(tessera::squared_distance(x, centroids_.data() + k * dims_, dims_),
                    static_cast<std::uint32_t>(k));
  return {result.index[0], result.best[0], result.best[1]};
}

NearestCentroid::Two NearestCentroid::nearest_two(const double* x, std::uint32_t hint) const {
  if (!tree_) return scan_two(x);
  LowestTwo result;
  result.addPoint(squared_distance(x, hint), hint);
  tree_->search(x, result);
  return {result.index[0], result.best[0], result.best[1]};
}

std::size_t NearestCentroid::nearest_k(const double* x, std::size_t m, std::uint32_t* index,
                                       double* squared_out) const {
  m = std::min(m, count_);
  if (m == 0) return 0;
  if (!tree_) {
    std::vector<std::pair<double, std::uint32_t>> all(count_);
    for (std::size_t k = 0; k < count_; ++k)
      all[k] = {tessera::squared_distance(x, centroids_.data() + k * dims_, dims_),
                static_cast<std::uint32_t>(k)};
    std::partial_sort(all.begin(), all.begin() + static_cast<std::ptrdiff_t>(m), all.end());
    for (std::size_t j = 0; j < m; ++j) {
      squared_out[j] = all[j].first;
      index[j] = all[j].second;
    }
    return m;
  }
  nanoflann::KNNResultSet<double, std::uint32_t> result(m);
  result.init(index, squared_out);
  tree_->search(x, result);
  return result.size();
}

}  // namespace tessera
