#include "core/search/novelty.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <nanoflann.hpp>
#include <stdexcept>
#include <string>

#include "core/base/point_cloud.hpp"

namespace tessera {
namespace {

// The k nearest points other than `self`, ordered by (distance, index). Ordering ties by index
// makes the chosen neighbours canonical, so the local competition score is the same whether a
// tree or a scan found them. The reported worst distance sits a hair above the k-th so the tree
// still visits points at exactly that distance; the comparisons themselves stay exact.
class NeighbourSet {
 public:
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;

  NeighbourSet(std::size_t capacity, std::uint32_t self)
      : capacity_(capacity), self_(self), dist_(capacity), index_(capacity) {}

  std::size_t size() const { return count_; }
  bool full() const { return count_ == capacity_; }
  double worstDist() const {
    if (count_ < capacity_) return std::numeric_limits<double>::max();
    const double worst = dist_[capacity_ - 1];
    return std::nextafter(worst * (1.0 + 1e-12), std::numeric_limits<double>::infinity());
  }
  bool addPoint(double dist, std::uint32_t idx) {
    if (idx == self_ || capacity_ == 0) return true;
    auto before = [&](std::size_t i) {
      return dist < dist_[i] || (dist == dist_[i] && idx < index_[i]);
    };
    if (count_ == capacity_ && !before(capacity_ - 1)) return true;
    std::size_t i = count_ < capacity_ ? count_++ : capacity_ - 1;
    for (; i > 0 && before(i - 1); --i) {
      dist_[i] = dist_[i - 1];
      index_[i] = index_[i - 1];
    }
    dist_[i] = dist;
    index_[i] = idx;
    return true;
  }
  double squared_distance(std::size_t i) const { return dist_[i]; }
  std::uint32_t index(std::size_t i) const { return index_[i]; }

 private:
  std::size_t capacity_;
  std::uint32_t self_;
  std::size_t count_ = 0;
  std::vector<double> dist_;
  std::vector<std::uint32_t> index_;
};

using Metric = nanoflann::L2_Simple_Adaptor<double, PointCloud, double, std::uint32_t>;
using Tree = nanoflann::KDTreeSingleIndexAdaptor<Metric, PointCloud, -1, std::uint32_t>;

// Below this many points a scan is as fast as building a tree.
constexpr std::size_t kScanLimit = 64;

}  // namespace

NeighbourScores score_neighbours(std::span<const double> points, std::size_t dims,
                                 std::span<const double> fitness,
                                 std::span<const std::size_t> queries, std::size_t k) {
  if (dims == 0 || points.size() % dims != 0)
    throw std::invalid_argument("score_neighbours: points do not have " + std::to_string(dims) +
                                " columns");
  const std::size_t n = points.size() / dims;
  if (fitness.size() != n) throw std::invalid_argument("score_neighbours: one fitness per point");
  if (n > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("score_neighbours: too many points");
  for (std::size_t q : queries)
    if (q >= n) throw std::invalid_argument("score_neighbours: query index out of range");

  NeighbourScores out;
  out.novelty.assign(queries.size(), 0.0);
  out.competition.assign(queries.size(), 0.0);
  const std::size_t capacity = std::min(k, n == 0 ? 0 : n - 1);
  if (capacity == 0) return out;

  PointCloud cloud{points.data(), n, dims};
  std::unique_ptr<Tree> tree;
  if (n > kScanLimit)
    tree = std::make_unique<Tree>(static_cast<int>(dims), cloud,
                                  nanoflann::KDTreeSingleIndexAdaptorParams(10));

  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, queries.size(), 16),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      for (std::size_t j = range.begin(); j != range.end(); ++j) {
                        const std::size_t q = queries[j];
                        const double* x = points.data() + q * dims;
                        NeighbourSet found(capacity, static_cast<std::uint32_t>(q));
                        if (tree) {
                          tree->findNeighbors(found, x, nanoflann::SearchParams());
                        } else {
                          for (std::size_t i = 0; i < n; ++i)
                            found.addPoint(squared_distance(x, points.data() + i * dims, dims),
                                           static_cast<std::uint32_t>(i));
                        }
                        double sum = 0.0;
                        std::size_t beaten = 0;
                        for (std::size_t i = 0; i < found.size(); ++i) {
                          sum += std::sqrt(found.squared_distance(i));
                          if (fitness[found.index(i)] < fitness[q]) ++beaten;
                        }
                        out.novelty[j] = sum / static_cast<double>(found.size());
                        out.competition[j] = static_cast<double>(beaten);
                      }
                    });
  return out;
}

NoveltyArchive::NoveltyArchive(Bounds descriptor_bounds, std::size_t genome_size,
                               NoveltySettings settings)
    : bounds_(std::move(descriptor_bounds)),
      genome_size_(genome_size),
      settings_(settings),
      threshold_(settings.threshold) {
  check_bounds(bounds_, "descriptor bounds");
  if (settings_.neighbours == 0) throw std::invalid_argument("novelty: k must be at least 1");
  if (!(settings_.threshold > 0.0) || !std::isfinite(settings_.threshold))
    throw std::invalid_argument("novelty: the threshold must be positive");
  if (settings_.window == 0) throw std::invalid_argument("novelty: the window must be positive");
  if (!(settings_.raise >= 1.0) || !(settings_.lower > 0.0 && settings_.lower <= 1.0))
    throw std::invalid_argument("novelty: raise must be >= 1 and lower in (0, 1]");
}

void NoveltyArchive::scale(std::span<const double> descriptor, std::span<double> out) const {
  for (std::size_t i = 0; i < bounds_.size(); ++i)
    out[i] = (descriptor[i] - bounds_.lower[i]) / bounds_.width(i);
}

void NoveltyArchive::add(std::span<const double> genome, std::span<const double> descriptor,
                         double fitness, std::uint64_t birth) {
  if (genome.size() != genome_size_ || descriptor.size() != bounds_.size())
    throw std::invalid_argument("novelty archive: genome or descriptor has the wrong length");
  genomes_.insert(genomes_.end(), genome.begin(), genome.end());
  descriptors_.insert(descriptors_.end(), descriptor.begin(), descriptor.end());
  scaled_.resize(scaled_.size() + bounds_.size());
  scale(descriptor, {scaled_.data() + scaled_.size() - bounds_.size(), bounds_.size()});
  fitness_.push_back(fitness);
  birth_.push_back(birth);
}

void NoveltyArchive::end_batch(std::uint64_t evaluations, std::uint64_t entries) {
  window_evaluations_ += evaluations;
  window_entries_ += entries;
  if (window_evaluations_ < settings_.window) return;
  if (window_entries_ > settings_.raise_above) {
    threshold_ *= settings_.raise;
  } else if (window_entries_ == 0) {
    threshold_ *= settings_.lower;
  }
  window_evaluations_ = 0;
  window_entries_ = 0;
}

void NoveltyArchive::set_state(double threshold, std::uint64_t window_evaluations,
                               std::uint64_t window_entries) {
  if (!(threshold > 0.0) || !std::isfinite(threshold))
    throw std::invalid_argument("novelty archive: stored threshold is not positive");
  threshold_ = threshold;
  window_evaluations_ = window_evaluations;
  window_entries_ = window_entries;
}

}  // namespace tessera
