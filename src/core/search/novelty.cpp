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

// A NeighbourSet seen through a block tree: the tree's local index i is row ids[i].
struct Mapped {
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;

  NeighbourSet& set;
  const std::uint32_t* ids;

  std::size_t size() const { return set.size(); }
  bool full() const { return set.full(); }
  double worstDist() const { return set.worstDist(); }
  bool addPoint(double dist, std::uint32_t idx) { return set.addPoint(dist, ids[idx]); }
};

// Points per k-d tree leaf.
constexpr std::size_t kLeafSize = 10;

// A k-d tree over `count` rows numbered from `first`. It keeps its own copy of the rows, in the
// order its leaves visit them, so that a search reads memory in sequence instead of jumping
// through an index into the whole set (at 50,000 points, mostly cache misses otherwise); the
// copy also leaves the tree valid when the rows it was built from move.
struct BlockTree {
  virtual ~BlockTree() = default;
  virtual void search(const double* x, NeighbourSet& found) const = 0;
};

template <int Dim>
class BlockTreeOf final : public BlockTree {
 public:
  using Metric = nanoflann::L2_Simple_Adaptor<double, PointCloud, double, std::uint32_t>;
  using Index = nanoflann::KDTreeSingleIndexAdaptor<Metric, PointCloud, Dim, std::uint32_t>;

  BlockTreeOf(PointCloud cloud, std::uint32_t first)
      : cloud_(cloud),
        index_(static_cast<int>(cloud.dims), cloud_,
               nanoflann::KDTreeSingleIndexAdaptorParams(kLeafSize)) {
    auto& order = index_.vAcc;  // leaf order: the tree's permutation of the rows
    const std::size_t dims = cloud.dims;
    rows_.resize(order.size() * dims);
    ids_.resize(order.size());
    for (std::size_t i = 0; i < order.size(); ++i) {
      std::copy_n(cloud.data + static_cast<std::size_t>(order[i]) * dims, dims,
                  rows_.begin() + static_cast<std::ptrdiff_t>(i * dims));
      ids_[i] = first + order[i];
      order[i] = static_cast<std::uint32_t>(i);
    }
    cloud_.data = rows_.data();
  }
  void search(const double* x, NeighbourSet& found) const override {
    Mapped mapped{found, ids_.data()};
    index_.findNeighbors(mapped, x, nanoflann::SearchParams());
  }

 private:
  PointCloud cloud_;  // the tree reads points through this (by reference)
  Index index_;
  std::vector<double> rows_;
  std::vector<std::uint32_t> ids_;
};

// Below this many points a scan is as fast as building a tree.
constexpr std::size_t kScanLimit = 64;

template <int Dim>
struct BlockTreeAt {
  static std::unique_ptr<BlockTree> make(PointCloud cloud, std::uint32_t first) {
    return std::make_unique<BlockTreeOf<Dim>>(cloud, first);
  }
};

// A tree over `count` rows starting at `rows`, numbered from `first`.
std::unique_ptr<BlockTree> tree_over(const double* rows, std::size_t count, std::size_t dims,
                                     std::size_t first) {
  const PointCloud cloud{rows, count, dims};
  const auto id = static_cast<std::uint32_t>(first);
  switch (dims) {
    case 1:
      return BlockTreeAt<1>::make(cloud, id);
    case 2:
      return BlockTreeAt<2>::make(cloud, id);
    case 3:
      return BlockTreeAt<3>::make(cloud, id);
    case 4:
      return BlockTreeAt<4>::make(cloud, id);
    default:
      return BlockTreeAt<-1>::make(cloud, id);
  }
}

// `count` rows starting at `rows`, numbered from `first` among all parts, searched through a tree
// over them or, when few, scanned.
struct Part {
  const double* rows = nullptr;
  std::size_t first = 0, count = 0;
  const BlockTree* tree = nullptr;
};

void search_part(const Part& part, std::size_t dims, const double* x, NeighbourSet& found) {
  const auto offset = static_cast<std::uint32_t>(part.first);
  if (part.tree) {
    part.tree->search(x, found);
    return;
  }
  const double* rows = part.rows;
  for (std::size_t i = 0; i < part.count; ++i)
    found.addPoint(squared_distance(x, rows + i * dims, dims),
                   offset + static_cast<std::uint32_t>(i));
}

// The k nearest neighbours of each query row among all parts together (rows numbered across the
// parts), in parallel. `row(q)` is the query's coordinates, `fitness(i)` any row's fitness.
template <class Row, class Fitness>
NeighbourScores score_parts(const std::vector<Part>& parts, std::size_t dims, std::size_t n,
                            std::span<const std::size_t> queries, std::size_t k, Row row,
                            Fitness fitness) {
  NeighbourScores out;
  out.novelty.assign(queries.size(), 0.0);
  out.competition.assign(queries.size(), 0.0);
  const std::size_t capacity = std::min(k, n == 0 ? 0 : n - 1);
  if (capacity == 0) return out;
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, queries.size(), 16),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      for (std::size_t j = range.begin(); j != range.end(); ++j) {
                        const std::size_t q = queries[j];
                        const double* x = row(q);
                        NeighbourSet found(capacity, static_cast<std::uint32_t>(q));
                        for (const Part& part : parts) search_part(part, dims, x, found);
                        double sum = 0.0;
                        std::size_t beaten = 0;
                        const double own = fitness(q);
                        for (std::size_t i = 0; i < found.size(); ++i) {
                          sum += std::sqrt(found.squared_distance(i));
                          if (fitness(found.index(i)) < own) ++beaten;
                        }
                        out.novelty[j] = sum / static_cast<double>(found.size());
                        out.competition[j] = static_cast<double>(beaten);
                      }
                    });
  return out;
}

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

  std::unique_ptr<BlockTree> tree;
  if (n > kScanLimit) tree = tree_over(points.data(), n, dims, 0);
  const std::vector<Part> parts = {{points.data(), 0, n, tree.get()}};
  return score_parts(
      parts, dims, n, queries, k, [&](std::size_t q) { return points.data() + q * dims; },
      [&](std::size_t i) { return fitness[i]; });
}

// The blocks of a growing index: full units of kUnit rows grouped by the binary digits of their
// number, largest first, then the last rows that fill no unit (scanned).
struct GrowingNeighbourIndex::Blocks {
  static constexpr std::size_t kUnit = kScanLimit;
  struct Block {
    std::size_t first, count;
    std::unique_ptr<BlockTree> tree;
  };
  std::vector<Block> trees;
  const double* points = nullptr;
};

GrowingNeighbourIndex::GrowingNeighbourIndex(std::size_t dims)
    : dims_(dims), blocks_(std::make_unique<Blocks>()) {}
GrowingNeighbourIndex::~GrowingNeighbourIndex() = default;
GrowingNeighbourIndex::GrowingNeighbourIndex(const GrowingNeighbourIndex& other)
    : dims_(other.dims_), blocks_(std::make_unique<Blocks>()) {}
GrowingNeighbourIndex& GrowingNeighbourIndex::operator=(const GrowingNeighbourIndex& other) {
  if (this != &other) {
    dims_ = other.dims_;
    count_ = 0;
    blocks_ = std::make_unique<Blocks>();
  }
  return *this;
}

std::size_t GrowingNeighbourIndex::blocks() const {
  return blocks_->trees.size();
}

void GrowingNeighbourIndex::update(const double* points, std::size_t count) {
  if (dims_ == 0) throw std::invalid_argument("neighbour index: no dimensions");
  if (count < count_) throw std::invalid_argument("neighbour index: the rows only ever grow");
  if (count > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("neighbour index: too many points");
  // Blocks of the old count whose place and size stay are kept: the high binary digits of the
  // unit count they stand for are unchanged. The others are rebuilt, merged into larger ones.
  std::vector<Blocks::Block> next;
  auto& old = blocks_->trees;
  std::size_t kept = 0, first = 0;
  const std::size_t units = count / Blocks::kUnit;
  for (int bit = 63; bit >= 0; --bit) {
    if (((units >> bit) & 1) == 0) continue;
    const std::size_t size = (std::size_t{1} << bit) * Blocks::kUnit;
    if (kept < old.size() && kept == next.size() && old[kept].first == first &&
        old[kept].count == size) {
      next.push_back(std::move(old[kept++]));
    } else {
      next.push_back({first, size, tree_over(points + first * dims_, size, dims_, first)});
    }
    first += size;
  }
  old = std::move(next);
  blocks_->points = points;
  count_ = count;
}

NeighbourScores GrowingNeighbourIndex::score(std::span<const double> fitness,
                                             std::span<const double> pool,
                                             std::span<const double> pool_fitness,
                                             std::span<const std::size_t> queries,
                                             std::size_t k) const {
  if (dims_ == 0) throw std::invalid_argument("neighbour index: no dimensions");
  const std::size_t m = pool.size() / dims_;
  if (pool.size() % dims_ != 0 || pool_fitness.size() != m || fitness.size() != count_)
    throw std::invalid_argument("neighbour index: rows and fitness do not match");
  const std::size_t n = count_ + m;
  if (n > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("neighbour index: too many points");
  for (std::size_t q : queries)
    if (q >= m) throw std::invalid_argument("neighbour index: query index out of range");

  std::vector<Part> parts;
  const double* points = blocks_->points;
  std::size_t covered = 0;
  for (const auto& block : blocks_->trees) {
    parts.push_back({points + block.first * dims_, block.first, block.count, block.tree.get()});
    covered = block.first + block.count;
  }
  if (covered < count_)
    parts.push_back({points + covered * dims_, covered, count_ - covered, nullptr});
  // The pool changes every batch: one tree over it, placed after the archive's rows.
  std::unique_ptr<BlockTree> pool_tree;
  if (m > kScanLimit) pool_tree = tree_over(pool.data(), m, dims_, count_);
  parts.push_back({pool.data(), count_, m, pool_tree.get()});
  std::vector<std::size_t> rows(queries.begin(), queries.end());
  for (auto& q : rows) q += count_;
  return score_parts(
      parts, dims_, n, rows, k, [&](std::size_t q) { return pool.data() + (q - count_) * dims_; },
      [&](std::size_t i) { return i < count_ ? fitness[i] : pool_fitness[i - count_]; });
}

NoveltyArchive::NoveltyArchive(Bounds descriptor_bounds, std::size_t genome_size,
                               NoveltySettings settings)
    : bounds_(std::move(descriptor_bounds)),
      genome_size_(genome_size),
      settings_(settings),
      threshold_(settings.threshold),
      index_(bounds_.size()) {
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

NeighbourScores NoveltyArchive::score_pool(std::span<const double> pool,
                                           std::span<const double> pool_fitness,
                                           std::span<const std::size_t> queries) {
  index_.update(scaled_.data(), size());
  return index_.score(fitness_, pool, pool_fitness, queries, settings_.neighbours);
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
