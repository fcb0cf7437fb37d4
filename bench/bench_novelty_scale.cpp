// Novelty scoring cost as the novelty archive grows: the cost per evaluation of scoring batches
// of 256 children (k = 15, 2-D descriptors) against an archive of 50,000 entries over its cost
// at 5,000 entries (aim <= 2), with the archive's growing index; and, for contrast, with a tree
// rebuilt over the archive and the batch for every batch (score_neighbours over the copied
// points, as the scoring did before the index). A few entries join the archive after every
// batch, as in a run. Medians of repeats (default 5).
// Usage: bench_novelty_scale [REPEATS [BATCHES]]
#include <stdlib.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <numeric>
#include <vector>

#include "core/base/rng.hpp"
#include "core/search/novelty.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

using namespace tessera;

namespace {

constexpr std::size_t kDims = 2;
constexpr std::size_t kBatch = 256;
constexpr std::size_t kJoinPerBatch = 2;

struct Costs {
  double growing = 0.0;  // seconds per evaluation
  double rebuilt = 0.0;
};

Costs measure(std::size_t entries, std::size_t batches, std::uint64_t seed) {
  const Bounds unit{std::vector<double>(kDims, 0.0), std::vector<double>(kDims, 1.0)};
  NoveltyArchive archive(unit, 1, NoveltySettings{});
  Rng rng(seed, entries);
  const std::vector<double> genome = {0.0};
  auto point = [&] {
    std::vector<double> d(kDims);
    for (auto& x : d) x = rng.uniform();
    return d;
  };
  for (std::size_t i = 0; i < entries; ++i) archive.add(genome, point(), rng.uniform(), i);

  std::vector<std::vector<double>> pools(batches), pool_fitness(batches);
  for (std::size_t b = 0; b < batches; ++b) {
    for (std::size_t j = 0; j < kBatch; ++j) {
      const auto d = point();
      pools[b].insert(pools[b].end(), d.begin(), d.end());
      pool_fitness[b].push_back(rng.uniform());
    }
  }
  std::vector<std::size_t> queries(kBatch);
  std::iota(queries.begin(), queries.end(), 0);
  std::vector<double> first_growing, first_rebuilt;  // each batch's first novelty, both ways

  Costs c;
  {
    NoveltyArchive grown = archive;
    (void)grown.score_pool(pools[0], pool_fitness[0], queries);  // builds the index once
    const auto start = std::chrono::steady_clock::now();
    for (std::size_t b = 0; b < batches; ++b) {
      const auto s = grown.score_pool(pools[b], pool_fitness[b], queries);
      first_growing.push_back(s.novelty[0]);
      for (std::size_t j = 0; j < kJoinPerBatch; ++j)
        grown.add(genome, {pools[b].data() + j * kDims, kDims}, pool_fitness[b][j], entries + b);
    }
    c.growing = seconds_since(start) / static_cast<double>(batches * kBatch);
  }
  {
    NoveltyArchive grown = archive;
    const auto start = std::chrono::steady_clock::now();
    for (std::size_t b = 0; b < batches; ++b) {
      std::vector<double> points, fitness;
      for (std::size_t i = 0; i < grown.size(); ++i) {
        points.insert(points.end(), grown.scaled(i).begin(), grown.scaled(i).end());
        fitness.push_back(grown.fitness(i));
      }
      std::vector<std::size_t> rows(queries);
      for (auto& q : rows) q += grown.size();
      points.insert(points.end(), pools[b].begin(), pools[b].end());
      fitness.insert(fitness.end(), pool_fitness[b].begin(), pool_fitness[b].end());
      const auto s = score_neighbours(points, kDims, fitness, rows, grown.settings().neighbours);
      first_rebuilt.push_back(s.novelty[0]);
      for (std::size_t j = 0; j < kJoinPerBatch; ++j)
        grown.add(genome, {pools[b].data() + j * kDims, kDims}, pool_fitness[b][j], entries + b);
    }
    c.rebuilt = seconds_since(start) / static_cast<double>(batches * kBatch);
  }
  // Both ways score the same sets, so they must agree bit for bit.
  if (first_growing != first_rebuilt) std::printf("  the two ways DISAGREE\n");
  return c;
}

}  // namespace

int main(int argc, char** argv) {
  const int repeats = argc > 1 ? std::atoi(argv[1]) : 5;
  const std::size_t batches = argc > 2 ? static_cast<std::size_t>(std::atoi(argv[2])) : 200;
  std::setvbuf(stdout, nullptr, _IOLBF, 0);  // figures appear as they are measured
  double load[3] = {0, 0, 0};
  if (::getloadavg(load, 3) == 3)
    std::printf("load averages at start (uptime): %.2f %.2f %.2f\n", load[0], load[1], load[2]);
  std::vector<double> g5, g50, r5, r50;
  for (int r = 0; r < repeats; ++r) {
    const Costs small = measure(5000, batches, static_cast<std::uint64_t>(r));
    const Costs large = measure(50000, batches, static_cast<std::uint64_t>(r));
    g5.push_back(small.growing);
    g50.push_back(large.growing);
    r5.push_back(small.rebuilt);
    r50.push_back(large.rebuilt);
  }
  std::printf("novelty scoring, %zu-D, k = 15, batches of %zu, %zu batches, median of %d runs\n",
              kDims, kBatch, batches, repeats);
  std::printf("  growing index      5,000 entries %8.2f us/eval   50,000 entries %8.2f us/eval\n",
              1e6 * median(g5), 1e6 * median(g50));
  std::printf("  rebuilt per batch  5,000 entries %8.2f us/eval   50,000 entries %8.2f us/eval\n",
              1e6 * median(r5), 1e6 * median(r50));
  std::printf("  cost(50k) / cost(5k): growing index %.2f (aim <= 2), rebuilt per batch %.2f\n",
              median(g50) / median(g5), median(r50) / median(r5));
  if (::getloadavg(load, 3) == 3)
    std::printf("load averages at end (uptime): %.2f %.2f %.2f\n", load[0], load[1], load[2]);
  return 0;
}
