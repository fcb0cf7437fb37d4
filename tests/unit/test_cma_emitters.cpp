// Covariance-adapting emitters: CMA-ME's improvement ranking puts new cells before improvements
// (Fontaine et al., GECCO 2020, Section 4); CMA-MAE's thresholds follow
// t <- (1 - alpha) t + alpha f on acceptance (Fontaine & Nikolaidis, ICLR 2023, Algorithm 1),
// so alpha = 1 is CMA-ME's acceptance and alpha = 0 keeps them at the minimum; restarts fire on
// a stalled distribution and on an emitter that stops improving the archive; mixtures are
// bit-identical across thread counts and across save + restore.
#include <catch2/catch.hpp>

#include <tbb/global_control.h>

#include <algorithm>
#include <memory>

#include "core/search/emitter_mixture.hpp"
#include "core/search/map_elites.hpp"
#include "eval/thread_evaluator.hpp"
#include "support/arm_problem.hpp"

using namespace tessera;

namespace {

std::shared_ptr<GridSpace> line_space(std::int64_t cells) {
  return std::make_shared<GridSpace>(Bounds{{0.0}, {1.0}}, std::vector<std::string>{"d"},
                                     std::vector<std::int64_t>{cells});
}

// A batch of `count` candidates with given fitness and descriptor (genomes left as sampled).
void fill(Batch& b, const std::vector<double>& fitness, const std::vector<double>& descriptor) {
  for (std::size_t j = 0; j < b.count; ++j) {
    b.fitness[j] = fitness[j];
    b.descriptors[j] = descriptor[j];
    b.valid[j] = 1;
  }
}

std::vector<InsertResult> offer_all(EliteArchive& archive, const Batch& b) {
  SearchCounters counters;
  double qd = 0.0;
  double best = -1e300;
  std::vector<InsertResult> out;
  for (std::size_t j = 0; j < b.count; ++j)
    out.push_back(offer_candidate(archive, b, j, j + 1, 0.0, counters, qd, best));
  return out;
}

struct Run {
  std::shared_ptr<testing::ArmTestProblem> problem;
  std::shared_ptr<ThreadEvaluator> evaluator;
  std::unique_ptr<MapElitesSearch> search;
};

Run make_mixture_run(std::size_t threads, std::uint64_t budget, std::uint64_t seed = 7) {
  Run r;
  r.problem = std::make_shared<testing::ArmTestProblem>(8);
  r.evaluator = std::make_shared<ThreadEvaluator>(r.problem, threads);
  std::vector<EmitterSpec> specs(3);
  specs[0].kind = "cma-mae";
  specs[0].count = 2;
  specs[0].batch = 12;
  specs[0].cma.learning_rate = 0.1;
  specs[1].kind = "cma-me";
  specs[1].batch = 10;
  specs[1].cma.ranking = CmaRanking::random_direction;
  specs[2].kind = "variation";
  specs[2].batch = 16;
  auto mixture = make_emitter_mixture(specs, 8);
  SearchSettings s;
  s.seed = seed;
  s.batch = mixture->batch_size();
  s.evaluations = budget;
  auto space =
      std::make_shared<GridSpace>(r.problem->info().descriptor, r.problem->info().descriptor_names,
                                  std::vector<std::int64_t>{16, 16});
  auto ev = r.evaluator;
  r.search = std::make_unique<MapElitesSearch>(s, space, r.problem->info().genome,
                                               r.problem->info().fitness_lower, std::move(mixture),
                                               [ev](Batch& b) { ev->evaluate(b); });
  return r;
}

void require_same(const ArchiveSnapshot& a, const ArchiveSnapshot& b) {
  REQUIRE(a.cell == b.cell);
  REQUIRE(a.fitness == b.fitness);  // bit-identical
  REQUIRE(a.genome == b.genome);
  REQUIRE(a.birth == b.birth);
  REQUIRE(a.resume->arrays == b.resume->arrays);  // emitter states and thresholds too
}

}  // namespace

TEST_CASE("improvement ranking orders new cells first, by fitness, then improvements by gain",
          "[emitters]") {
  EliteArchive archive(line_space(10), 3);
  // Elites in cells 0..4 with fitness 1.
  for (int c = 0; c < 5; ++c) {
    std::vector<double> g(3, 0.0);
    std::vector<double> d = {0.05 + 0.1 * c};
    archive.insert(g, 1.0, d, 0);
  }
  CmaEmitterSettings settings;
  settings.lambda = 8;
  CmaEmitter emitter(settings, 3, "emitter.0");
  Bounds bounds{{-1, -1, -1}, {1, 1, 1}};
  EmitContext context;
  context.genome_bounds = &bounds;
  Batch b;
  b.resize(8, 3, 1, 0);
  emitter.ask(archive, context, b);
  // j: 0 improves cell 0 by 0.5, 1 is rejected, 2 is new (f 0.2), 3 improves cell 2 by 3,
  // 4 new (f 0.9), 5 rejected, 6 improves cell 4 by 0.1, 7 new (f 0.5).
  fill(b, {1.5, 0.5, 0.2, 4.0, 0.9, 0.1, 1.1, 0.5},
       {0.05, 0.15, 0.75, 0.25, 0.85, 0.35, 0.45, 0.95});
  const auto results = offer_all(archive, b);
  REQUIRE(results[2].outcome == Insertion::new_cell);
  REQUIRE(results[3].outcome == Insertion::improved);
  emitter.tell(b, results);
  const auto& order = emitter.last_order();
  const std::vector<std::size_t> expected_head = {4, 7, 2, 3, 0, 6};
  REQUIRE(std::vector<std::size_t>(order.begin(), order.begin() + 6) == expected_head);
  // Only the six accepted candidates recombine: the mean moved (the strategy did update).
  REQUIRE(emitter.strategy().generation() == 1);
}

TEST_CASE("CMA-MAE thresholds follow the published update; alpha 1 and 0 are the limits",
          "[emitters]") {
  SECTION("alpha = 0.5 on one cell, step by step") {
    EliteArchive archive(line_space(4), 1);
    archive.enable_thresholds(0.5, 0.0);
    Batch b;
    b.resize(4, 1, 1, 0);
    // t: 0 -> 10 accepted: 5 -> 8 accepted: 6.5 -> 6 refused: 6.5 -> 7 accepted: 6.75.
    fill(b, {10.0, 8.0, 6.0, 7.0}, {0.1, 0.1, 0.1, 0.1});
    const auto r = offer_all(archive, b);
    REQUIRE(r[0].threshold == 0.0);
    REQUIRE(r[1].threshold == 5.0);
    REQUIRE(r[2].threshold == 6.5);
    REQUIRE_FALSE(r[2].above_threshold);
    REQUIRE(r[3].threshold == 6.5);
    REQUIRE(archive.threshold_of_cell(0) == 6.75);
    REQUIRE(archive.fitness(0) == 10.0);           // the elite stays the best found
    REQUIRE(archive.threshold_of_cell(1) == 0.0);  // an empty cell sits at the minimum
  }
  SECTION("alpha = 1: a threshold is its cell's elite fitness, acceptance is CMA-ME's") {
    EliteArchive archive(line_space(5), 1);
    archive.enable_thresholds(1.0, 0.0);
    Batch b;
    b.resize(10, 1, 1, 0);
    fill(b, {3, 1, 4, 1, 5, 9, 2, 6, 5, 3}, {0.1, 0.1, 0.3, 0.3, 0.5, 0.1, 0.7, 0.7, 0.3, 0.9});
    const auto r = offer_all(archive, b);
    for (std::size_t j = 0; j < r.size(); ++j) {
      const bool accepted =
          r[j].outcome == Insertion::new_cell || r[j].outcome == Insertion::improved;
      REQUIRE(r[j].above_threshold == accepted);
    }
    const auto t = archive.thresholds();
    for (std::size_t i = 0; i < archive.size(); ++i) REQUIRE(t[i] == archive.fitness(i));
  }
  SECTION("alpha = 0: thresholds stay at the minimum") {
    EliteArchive archive(line_space(5), 1);
    archive.enable_thresholds(0.0, -2.0);
    Batch b;
    b.resize(6, 1, 1, 0);
    fill(b, {3, 1, 4, 1, 5, 9}, {0.1, 0.1, 0.3, 0.3, 0.5, 0.1});
    const auto r = offer_all(archive, b);
    for (const auto& x : r) REQUIRE(x.threshold == -2.0);
    for (double t : archive.thresholds()) REQUIRE(t == -2.0);
  }
}

TEST_CASE("restarts fire on a stalled distribution and on an emitter without archive gains",
          "[emitters]") {
  Bounds bounds{{0, 0}, {1, 1}};
  EmitContext context;
  context.genome_bounds = &bounds;
  SECTION("stalled: a step size below what doubles resolve") {
    EliteArchive archive(line_space(10), 2);
    CmaEmitterSettings settings;
    settings.lambda = 6;
    settings.sigma = 1e-14;
    settings.patience = 0;  // only the stall rule
    CmaEmitter emitter(settings, 2, "emitter.0");
    Batch b;
    b.resize(6, 2, 1, 0);
    emitter.ask(archive, context, b);
    fill(b, {1, 2, 3, 4, 5, 6}, {0.05, 0.15, 0.25, 0.35, 0.45, 0.55});
    emitter.tell(b, offer_all(archive, b));
    REQUIRE(emitter.restarts() == 1);
  }
  SECTION("no gain: every candidate lands in a cell whose elite is better") {
    EliteArchive archive(line_space(10), 2);
    std::vector<double> g = {0.5, 0.5};
    std::vector<double> d = {0.05};
    archive.insert(g, 100.0, d, 0);
    CmaEmitterSettings settings;
    settings.lambda = 6;
    settings.patience = 2;
    CmaEmitter emitter(settings, 2, "emitter.0");
    Batch b;
    b.resize(6, 2, 1, 0);
    for (int generation = 0; generation < 4; ++generation) {
      context.batch_index = static_cast<std::uint64_t>(generation);
      emitter.ask(archive, context, b);
      fill(b, {1, 1, 1, 1, 1, 1}, {0.05, 0.05, 0.05, 0.05, 0.05, 0.05});
      emitter.tell(b, offer_all(archive, b));
      REQUIRE(emitter.restarts() == static_cast<std::uint64_t>((generation + 1) / 2));
    }
  }
}

TEST_CASE("emitter mixtures are bit-identical for 1 and 4 threads and across save + restore",
          "[emitters]") {
  ArchiveSnapshot one, four;
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 1);
    auto run = make_mixture_run(1, 6000);
    while (!run.search->finished()) run.search->step();
    run.search->save(one);
  }
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 4);
    auto run = make_mixture_run(4, 6000);
    while (!run.search->finished()) run.search->step();
    run.search->save(four);
  }
  require_same(one, four);
  REQUIRE(one.resume->arrays.count("thresholds") == 1);
  REQUIRE(one.resume->arrays.count("emitter.2") == 1);

  // Stop after some batches (mid-way through the emitters' generations), restore, continue.
  auto first = make_mixture_run(2, 2500);
  while (!first.search->finished()) first.search->step();
  ArchiveSnapshot half;
  first.search->save(half);
  auto second = make_mixture_run(2, 6000);
  second.search->restore(half);
  while (!second.search->finished()) second.search->step();
  ArchiveSnapshot resumed;
  second.search->save(resumed);
  require_same(one, resumed);

  // A different seed differs (the comparisons can fail).
  auto other = make_mixture_run(2, 6000, 8);
  while (!other.search->finished()) other.search->step();
  ArchiveSnapshot three;
  other.search->save(three);
  REQUIRE(three.fitness != one.fitness);
}
