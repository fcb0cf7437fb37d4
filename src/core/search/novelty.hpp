// Novelty search's building blocks (Lehman & Stanley, Evolutionary Computation 2011): the
// novelty of a behaviour is the mean distance to its k nearest neighbours among the novelty
// archive and the current population; the archive admits behaviours whose novelty exceeds a
// threshold that adapts to the rate of entries. The local competition score (Lehman & Stanley,
// GECCO 2011) is how many of those k neighbours a behaviour beats on fitness.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <span>
#include <vector>

#include "core/base/types.hpp"

namespace tessera {

struct NoveltySettings {
  // k = 15 nearest neighbours, the value used throughout Lehman & Stanley (EC 2011; GECCO 2011).
  std::size_t neighbours = 15;
  // Initial admission threshold, in descriptor units scaled to [0, 1] per dimension. Our own
  // choice (the published value is in maze pixels): about the mean 15-NN distance of 1,000
  // behaviours spread evenly over the unit square, so early entries are neither all nor none.
  double threshold = 0.05;
  // Adaptation, after the maze experiments of Lehman & Stanley (EC 2011, from memory): once per
  // window of 2,500 evaluations the threshold rises by 20% if more than 4 behaviours entered
  // during the window, and falls by 5% if none did.
  std::uint64_t window = 2500;
  std::uint64_t raise_above = 4;
  double raise = 1.2;
  double lower = 0.95;
};

// For every query point (an index into `points`, rows of `dims` values), the k nearest other
// points of the whole set, found with a k-d tree (nanoflann). Distances are Euclidean.
//   novelty[i]     = mean distance to those neighbours (fewer when the set is smaller; 0 alone)
//   competition[i] = how many of them have a fitness strictly below fitness[query]
// The query point itself is never its own neighbour; duplicates of it are. Queries run in
// parallel; each result depends only on the set, never on the thread count.
struct NeighbourScores {
  std::vector<double> novelty;
  std::vector<double> competition;
};
NeighbourScores score_neighbours(std::span<const double> points, std::size_t dims,
                                 std::span<const double> fitness,
                                 std::span<const std::size_t> queries, std::size_t k);

// The k nearest neighbours among rows that are only ever appended (the novelty archive's scaled
// descriptors): k-d trees over blocks of doubling sizes, merged like a binary counter (the
// logarithmic method of Bentley & Saxe, J. Algorithms 1980), so that growing by one point costs
// amortised O(log n) tree building instead of a rebuild of the whole set for every batch. The
// answers are exact and canonical (ties by index), so they never depend on how the blocks fell;
// a copy therefore starts empty and builds its blocks on first use.
class GrowingNeighbourIndex {
 public:
  explicit GrowingNeighbourIndex(std::size_t dims);
  ~GrowingNeighbourIndex();
  GrowingNeighbourIndex(const GrowingNeighbourIndex& other);
  GrowingNeighbourIndex& operator=(const GrowingNeighbourIndex& other);

  // Covers the first `count` rows of `points` (row-major, `dims` values each). The rows may have
  // moved since the last call (a grown vector), but rows already covered must be unchanged.
  void update(const double* points, std::size_t count);
  std::size_t size() const { return count_; }
  std::size_t blocks() const;  // trees currently kept (for tests)

  // Scores queries against the covered rows followed by `pool` (more rows, with their fitness):
  // exactly score_neighbours over that concatenation, query j being row size() + queries[j].
  NeighbourScores score(std::span<const double> fitness, std::span<const double> pool,
                        std::span<const double> pool_fitness, std::span<const std::size_t> queries,
                        std::size_t k) const;

  struct Blocks;  // defined in novelty.cpp

 private:
  std::size_t dims_;
  std::size_t count_ = 0;
  std::unique_ptr<Blocks> blocks_;
};

// The novelty archive: behaviours (with their genome, fitness and birth) admitted by the
// adaptive threshold. Descriptors are kept as evaluated; distances use them scaled to [0, 1] by
// the descriptor bounds so one threshold suits any problem.
class NoveltyArchive {
 public:
  NoveltyArchive(Bounds descriptor_bounds, std::size_t genome_size, NoveltySettings settings);

  const NoveltySettings& settings() const { return settings_; }
  std::size_t size() const { return fitness_.size(); }
  std::size_t genome_size() const { return genome_size_; }
  std::size_t descriptor_size() const { return bounds_.size(); }

  void add(std::span<const double> genome, std::span<const double> descriptor, double fitness,
           std::uint64_t birth);
  std::span<const double> genome(std::size_t i) const {
    return {genomes_.data() + i * genome_size_, genome_size_};
  }
  std::span<const double> descriptor(std::size_t i) const {
    return {descriptors_.data() + i * bounds_.size(), bounds_.size()};
  }
  // The scaled descriptor, as distances see it.
  std::span<const double> scaled(std::size_t i) const {
    return {scaled_.data() + i * bounds_.size(), bounds_.size()};
  }
  double fitness(std::size_t i) const { return fitness_[i]; }
  std::uint64_t birth(std::size_t i) const { return birth_[i]; }

  // Writes descriptor scaled to [0, 1] per dimension into out.
  void scale(std::span<const double> descriptor, std::span<double> out) const;

  // Novelty and local competition of pool members (scaled descriptors, with their fitness)
  // against the archive and the whole pool: score_neighbours over the archive's scaled
  // descriptors followed by the pool, query j being row size() + queries[j]. The archive's part
  // comes from an index that grows with it.
  NeighbourScores score_pool(std::span<const double> pool, std::span<const double> pool_fitness,
                             std::span<const std::size_t> queries);

  // Adaptive threshold. A batch of `evaluations` that admitted `entries` behaviours counts
  // towards the current window; when the window is full the threshold adapts and a new window
  // starts (windows end on batch boundaries).
  double threshold() const { return threshold_; }
  void end_batch(std::uint64_t evaluations, std::uint64_t entries);

  // Window state, for checkpoints.
  std::uint64_t window_evaluations() const { return window_evaluations_; }
  std::uint64_t window_entries() const { return window_entries_; }
  void set_state(double threshold, std::uint64_t window_evaluations, std::uint64_t window_entries);

 private:
  Bounds bounds_;
  std::size_t genome_size_;
  NoveltySettings settings_;
  double threshold_;
  std::uint64_t window_evaluations_ = 0;
  std::uint64_t window_entries_ = 0;
  std::vector<double> genomes_;
  std::vector<double> descriptors_;
  std::vector<double> scaled_;
  std::vector<double> fitness_;
  std::vector<std::uint64_t> birth_;
  GrowingNeighbourIndex index_;
};

}  // namespace tessera
