// Runs that start from another run's elites (search.start_from) and stop at a max fitness
// (search.stop_fitness): copies cycle through the elites in order; per-parameter resampling (the
// matched random control) draws each parameter from that parameter's observed values,
// independently across parameters; a stop fitness ends the run after the batch that reached it.
#include <catch2/catch.hpp>

#include <cmath>
#include <map>
#include <memory>
#include <set>

#include "core/search/map_elites.hpp"
#include "core/search/search.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/thread_evaluator.hpp"
#include "support/arm_problem.hpp"

using namespace tessera;

namespace {

StartGenomes three_rows(bool resample) {
  StartGenomes s;
  s.genomes = {0.1, 1.1, 2.1,   // row 0
               0.2, 1.2, 2.2,   // row 1
               0.3, 1.3, 2.3};  // row 2
  s.count = 3;
  s.resample = resample;
  return s;
}

}  // namespace

TEST_CASE("copied start genomes cycle through the elites in order", "[search]") {
  const StartGenomes start = three_rows(false);
  const Bounds bounds({-5, -5, -5}, {5, 5, 5});
  std::vector<double> out(3);
  for (std::uint64_t i = 0; i < 7; ++i) {
    Rng rng(1, 0, i, 3);
    initial_genome(&start, bounds, i, rng, out);
    const std::size_t row = i % 3;
    REQUIRE(out == std::vector<double>(start.genomes.begin() + row * 3,
                                       start.genomes.begin() + row * 3 + 3));
  }
}

TEST_CASE("resampled start genomes draw each parameter from its own column, independently",
          "[search]") {
  const StartGenomes start = three_rows(true);
  const Bounds bounds({-5, -5, -5}, {5, 5, 5});
  std::vector<double> out(3);
  const int draws = 18000;
  std::map<std::pair<int, int>, int> pairs;  // (row of parameter 0, row of parameter 1)
  std::map<int, int> rows0;
  for (int i = 0; i < draws; ++i) {
    Rng rng(7, 0, static_cast<std::uint64_t>(i), 3);
    initial_genome(&start, bounds, static_cast<std::uint64_t>(i), rng, out);
    int row[3];
    for (int p = 0; p < 3; ++p) {
      row[p] = static_cast<int>(std::lround((out[p] - p - 0.1) * 10.0));
      REQUIRE(row[p] >= 0);
      REQUIRE(row[p] <= 2);
      REQUIRE(out[p] == start.genomes[static_cast<std::size_t>(row[p] * 3 + p)]);
    }
    ++rows0[row[0]];
    ++pairs[{row[0], row[1]}];
  }
  // Each value 1/3 of the time, each pair of rows 1/9 (independence; copying whole rows would
  // give only the 3 diagonal pairs). Bounds: 5 binomial standard deviations (common practice).
  for (const auto& [row, n] : rows0) {
    const double sd = std::sqrt(draws * (1.0 / 3) * (2.0 / 3));
    REQUIRE(std::abs(n - draws / 3.0) < 5 * sd);
  }
  REQUIRE(pairs.size() == 9);
  for (const auto& [pair, n] : pairs) {
    const double sd = std::sqrt(draws * (1.0 / 9) * (8.0 / 9));
    REQUIRE(std::abs(n - draws / 9.0) < 5 * sd);
  }
}

TEST_CASE("a stop fitness ends MAP-Elites after the batch that reached it", "[search]") {
  auto problem = std::make_shared<testing::ArmTestProblem>(6, false);
  auto evaluator = std::make_shared<ThreadEvaluator>(problem, 2);
  SearchSettings s;
  s.seed = 5;
  s.batch = 100;
  s.evaluations = 50000;
  s.stop_fitness = -0.05;
  auto space =
      std::make_shared<GridSpace>(problem->info().descriptor, problem->info().descriptor_names,
                                  std::vector<std::int64_t>{20, 20});
  MapElitesSearch search(s, space, problem->info().genome, problem->info().fitness_lower,
                         std::make_unique<VariationEmitter>(VariationSettings{}),
                         [evaluator](Batch& b) { evaluator->evaluate(b); });
  while (!search.finished()) search.step();
  const auto& h = search.history();
  REQUIRE(search.counters().evaluations < s.evaluations);
  REQUIRE(h.back().max_fitness >= -0.05);
  for (std::size_t i = 0; i + 1 < h.size(); ++i) REQUIRE(h[i].max_fitness < -0.05);
}
