#include "core/select/query.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <nanoflann.hpp>
#include <stdexcept>
#include <string>
#include <utility>

#include "core/base/point_cloud.hpp"

namespace tessera {

bool EliteFilter::accepts(const ArchiveSnapshot& s, std::size_t elite) const {
  if (min_fitness && !(s.fitness[elite] >= *min_fitness)) return false;
  const std::size_t d = s.descriptor_size();
  for (const auto& w : within) {
    const double v = w.extra ? s.extra(elite, w.dimension) : s.descriptor[elite * d + w.dimension];
    if (!(v >= w.lower && v <= w.upper)) return false;
  }
  return true;
}

std::vector<std::size_t> filter_elites(const ArchiveSnapshot& s, const EliteFilter& filter) {
  std::vector<std::size_t> rows;
  rows.reserve(s.elite_count());
  for (std::size_t i = 0; i < s.elite_count(); ++i)
    if (filter.accepts(s, i)) rows.push_back(i);
  return rows;
}

namespace {

// The k best (squared distance, point) pairs ordered lexicographically. Once full it reports a
// worst distance a hair above the k-th so that the tree still visits points at exactly that
// distance, and addPoint keeps the lower index among equals: the answer then never depends on how
// the tree was built. The comparisons stay exact; only pruning is looser.
class OrderedNearest {
 public:
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;

  explicit OrderedNearest(std::size_t k) : k_(k) { items_.reserve(k + 1); }

  std::size_t size() const { return items_.size(); }
  bool full() const { return items_.size() == k_; }
  // Kept up to date by addPoint: the tree asks for it at every node it visits.
  double worstDist() const { return worst_; }
  bool addPoint(double dist, std::uint32_t idx) {
    const std::pair<double, std::uint32_t> item{dist, idx};
    if (full() && !(item < items_.back())) return true;
    items_.insert(std::upper_bound(items_.begin(), items_.end(), item), item);
    if (items_.size() > k_) items_.pop_back();
    if (full())
      worst_ = std::nextafter(items_.back().first * (1.0 + 1e-12),
                              std::numeric_limits<double>::infinity());
    return true;
  }
  const std::vector<std::pair<double, std::uint32_t>>& items() const { return items_; }

 private:
  std::size_t k_;
  std::vector<std::pair<double, std::uint32_t>> items_;
  double worst_ = std::numeric_limits<double>::infinity();
};

}  // namespace

struct NearestElites::Tree {
  virtual ~Tree() = default;
  virtual void search(const double* x, OrderedNearest& result) const = 0;
};

namespace {

template <int Dim>
class TreeOf final : public NearestElites::Tree {
 public:
  using Metric = nanoflann::L2_Simple_Adaptor<double, PointCloud, double, std::uint32_t>;
  using Index = nanoflann::KDTreeSingleIndexAdaptor<Metric, PointCloud, Dim, std::uint32_t>;

  // Leaf size 10: within a few percent of the best for 2-8 dimensions (bench/bench_query).
  explicit TreeOf(PointCloud cloud)
      : cloud_(cloud),
        index_(static_cast<int>(cloud.dims), cloud_,
               nanoflann::KDTreeSingleIndexAdaptorParams(10)) {}

  void search(const double* x, OrderedNearest& result) const override {
    index_.findNeighbors(result, x, nanoflann::SearchParams());
  }

 private:
  PointCloud cloud_;
  Index index_;
};

}  // namespace

NearestElites::NearestElites(std::span<const double> descriptors, const Bounds& bounds,
                             std::vector<std::size_t> rows)
    : dims_(bounds.size()), lower_(bounds.lower), rows_(std::move(rows)) {
  if (dims_ == 0 || descriptors.size() % dims_ != 0)
    throw std::invalid_argument("nearest elites: " + std::to_string(descriptors.size()) +
                                " values do not form descriptors of dimension " +
                                std::to_string(dims_));
  if (rows_.size() > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("nearest elites: too many elites");
  const std::size_t n = descriptors.size() / dims_;
  width_.resize(dims_);
  for (std::size_t i = 0; i < dims_; ++i) width_[i] = bounds.upper[i] - bounds.lower[i];
  points_.resize(rows_.size() * dims_);
  for (std::size_t r = 0; r < rows_.size(); ++r) {
    if (rows_[r] >= n) throw std::invalid_argument("nearest elites: row out of range");
    for (std::size_t i = 0; i < dims_; ++i)
      points_[r * dims_ + i] = (descriptors[rows_[r] * dims_ + i] - lower_[i]) / width_[i];
  }
  if (!rows_.empty())
    tree_ = make_tree_for_dimension<TreeOf, Tree>({points_.data(), rows_.size(), dims_});
}

NearestElites::NearestElites(const ArchiveSnapshot& snapshot, const EliteFilter& filter)
    : NearestElites(snapshot.descriptor, snapshot.descriptor_bounds,
                    filter_elites(snapshot, filter)) {}

NearestElites::~NearestElites() = default;
NearestElites::NearestElites(NearestElites&&) noexcept = default;
NearestElites& NearestElites::operator=(NearestElites&&) noexcept = default;

std::vector<double> NearestElites::scale(std::span<const double> target) const {
  if (target.size() != dims_)
    throw std::invalid_argument("nearest elites: target has " + std::to_string(target.size()) +
                                " values, expected " + std::to_string(dims_));
  // Division (not a stored reciprocal) so the scaled values match (d - lower) / width exactly.
  std::vector<double> x(dims_);
  for (std::size_t i = 0; i < dims_; ++i) x[i] = (target[i] - lower_[i]) / width_[i];
  return x;
}

std::vector<Neighbour> NearestElites::nearest(std::span<const double> target, std::size_t k) const {
  const std::vector<double> x = scale(target);
  std::vector<Neighbour> out;
  if (k == 0 || !tree_) return out;
  OrderedNearest result(std::min(k, rows_.size()));
  tree_->search(x.data(), result);
  out.reserve(result.size());
  for (const auto& [d2, idx] : result.items()) out.push_back({rows_[idx], std::sqrt(d2)});
  return out;
}

std::vector<Neighbour> NearestElites::nearest_by_scan(std::span<const double> target,
                                                      std::size_t k) const {
  const std::vector<double> x = scale(target);
  OrderedNearest result(std::min(k, rows_.size()));
  std::vector<Neighbour> out;
  if (k == 0) return out;
  for (std::size_t r = 0; r < rows_.size(); ++r) {
    const double d2 = squared_distance(x.data(), points_.data() + r * dims_, dims_);
    if (d2 < result.worstDist()) result.addPoint(d2, static_cast<std::uint32_t>(r));
  }
  for (const auto& [d2, idx] : result.items()) out.push_back({rows_[idx], std::sqrt(d2)});
  return out;
}

}  // namespace tessera
