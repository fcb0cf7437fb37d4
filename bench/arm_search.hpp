// The arm's MAP-Elites search (Iso+LineDD, default settings) on a side x side grid, set up as
// `tessera illuminate` sets up an in-process plugin: each chunk of a batch is made, evaluated
// and placed by one thread in one pass. Shared by the benchmarks that time the engine's loop.
#pragma once

#include <cstdint>
#include <memory>
#include <vector>

#include "core/search/map_elites.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/problem.hpp"

namespace tessera::bench {

inline std::unique_ptr<MapElitesSearch> arm_search(const std::shared_ptr<Problem>& problem,
                                                   std::size_t threads, std::size_t batch,
                                                   std::uint64_t evaluations, std::int64_t side) {
  auto evaluator = std::make_shared<ThreadEvaluator>(problem, threads);
  SearchSettings s;
  s.batch = batch;
  s.evaluations = evaluations;
  auto space =
      std::make_shared<GridSpace>(problem->info().descriptor, problem->info().descriptor_names,
                                  std::vector<std::int64_t>{side, side});
  auto search = std::make_unique<MapElitesSearch>(
      s, space, problem->info().genome, problem->info().fitness_lower,
      std::make_unique<VariationEmitter>(VariationSettings{}),
      [evaluator](Batch& b) { evaluator->evaluate(b); });
  search->set_range_evaluator([evaluator](Batch& b, std::size_t first, std::size_t count) {
    evaluator->evaluate_range(b, first, count);
  });
  return search;
}

}  // namespace tessera::bench
