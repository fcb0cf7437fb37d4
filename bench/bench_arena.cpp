// Arena and novelty figures, on one core:
//   1. arena evaluations per second per core (the plugin, deceptive arena and larger maze);
//   2. the share of a novelty run's time spent on the k-nearest-neighbour scores as the novelty
//      archive grows to 10,000 behaviours (a run whose threshold admits nearly every child);
//   3. the scoring cost alone (k-d tree build + one batch of queries) against archive size,
//      to show how it scales.
// Medians of a few repeats; ratios come from one run.
#include <stdlib.h>

#include <tbb/global_control.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include "core/search/novelty.hpp"
#include "core/search/population_search.hpp"
#include "core/base/rng.hpp"
#include "core/search/variation.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/registry.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

namespace {

using Clock = std::chrono::steady_clock;



// The shipped arenas, found from this source file's place in the tree.
std::string layout(const char* name) {
  const auto root = std::filesystem::path(__FILE__).parent_path().parent_path();
  return "layout = \"" + (root / "problems" / "arenas" / name).string() + "\"\n";
}

void evaluations_per_second(const char* arena, const std::string& options) {
  const auto problem = tessera::open_plugin_problem("arena", options);
  const auto& info = problem->info();
  auto instance = problem->make_instance();
  tessera::Batch batch;
  batch.resize(256, info.genome_size(), info.descriptor_size(), info.extra_names.size());
  tessera::Rng rng(1, 2);
  for (std::size_t k = 0; k < batch.count; ++k)
    tessera::random_genome(info.genome, rng, batch.genome(k));
  std::vector<double> rates;
  for (int rep = 0; rep < 5; ++rep) {
    const auto t0 = Clock::now();
    instance->evaluate(batch, 0, batch.count);
    rates.push_back(static_cast<double>(batch.count) / seconds_since(t0));
  }
  std::printf("  %-10s %8.0f evaluations/s/core\n", arena, median(rates));
}

}  // namespace

int main() {
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 1);
  tbb::global_control one_core(tbb::global_control::max_allowed_parallelism, 1);

  std::printf(
      "1. arena evaluations (40 s at dt 0.2 s = 200 steps; 80 s in the maze), median of 5\n");
  evaluations_per_second("deceptive", layout("deceptive.txt"));
  evaluations_per_second("open", layout("open.txt"));
  evaluations_per_second("maze", layout("maze.txt") + "duration = 80.0\n");

  std::printf("\n2. novelty run on the deceptive arena, batch 256, archive grown to 10,000\n");
  std::printf("   %8s %12s %12s %8s\n", "archive", "k-NN ms", "batch ms", "k-NN %");
  {
    const auto problem = tessera::open_plugin_problem("arena", layout("deceptive.txt"));
    const auto& info = problem->info();
    auto evaluator = std::make_shared<tessera::ThreadEvaluator>(problem, 1);
    tessera::SearchSettings s;
    s.batch = 256;
    s.evaluations = 1u << 30;
    tessera::PopulationSettings p;
    p.novelty.threshold = 1e-4;  // admit nearly everything: the archive grows fast
    p.novelty.raise = 1.0;
    tessera::VariationSettings v;
    v.op = tessera::VariationOperator::gaussian;
    v.sigma = 0.03;
    auto space = std::make_shared<tessera::GridSpace>(info.descriptor, info.descriptor_names,
                                                      std::vector<std::int64_t>{20, 20});
    tessera::PopulationSearch search(
        tessera::PopulationAlgorithm::novelty, s, p, v, space, info.genome, info.fitness_lower,
        [evaluator](tessera::Batch& b) { evaluator->evaluate(b); }, info.extra_names.size());
    std::size_t next_report = 1000;
    while (search.behaviours().size() < 10000) {
      const double scored = search.scoring_seconds();
      const auto t0 = Clock::now();
      search.step();
      const double total = seconds_since(t0);
      const double knn = search.scoring_seconds() - scored;
      if (search.behaviours().size() >= next_report) {
        std::printf("   %8zu %12.2f %12.1f %7.2f%%\n", search.behaviours().size(), knn * 1e3,
                    total * 1e3, 100.0 * knn / total);
        next_report = next_report < 2000 ? 2000 : next_report < 5000 ? 5000 : 10000;
      }
    }
  }

  std::printf(
      "\n3. scoring alone: k-d tree over archive + 256 children, k = 15, 2-D, median of 5\n");
  std::printf("   %8s %12s %14s\n", "archive", "ms/batch", "us/behaviour");
  for (std::size_t n : {1000u, 2000u, 5000u, 10000u, 20000u, 50000u}) {
    tessera::Rng rng(3, n);
    std::vector<double> points((n + 256) * 2);
    for (auto& x : points) x = rng.uniform();
    const std::vector<double> fitness(n + 256, 0.0);
    std::vector<std::size_t> queries(256);
    for (std::size_t i = 0; i < 256; ++i) queries[i] = n + i;
    std::vector<double> times;
    for (int rep = 0; rep < 5; ++rep) {
      const auto t0 = Clock::now();
      const auto scores = tessera::score_neighbours(points, 2, fitness, queries, 15);
      times.push_back(seconds_since(t0));
      if (scores.novelty[0] < 0) std::printf("impossible\n");
    }
    const double t = median(times);
    std::printf("   %8zu %12.3f %14.3f\n", n, t * 1e3, t * 1e6 / 256.0);
  }
  return 0;
}
