// The population searches (novelty, novelty-lc, objective, random): archive admission follows
// the threshold, the reference archive measures every evaluation, invalid candidates never
// enter, results are bit-identical for 1 and 2 threads, and stop + save to a file + restore +
// continue equals one uninterrupted run, for the in-process arm and the arena plugin.
#include <stdlib.h>
#include <unistd.h>

#include <tbb/global_control.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <filesystem>
#include <functional>
#include <memory>
#include <numeric>
#include <string>

#include "core/search/population_search.hpp"
#include "eval/thread_evaluator.hpp"
#include "io/archive_file.hpp"
#include "problems/registry.hpp"
#include "support/arm_problem.hpp"

using namespace tessera;

namespace {

struct Run {
  std::shared_ptr<const Problem> problem;
  std::shared_ptr<ThreadEvaluator> evaluator;
  std::unique_ptr<PopulationSearch> search;
};

std::shared_ptr<const Problem> arena_problem() {
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 1);
  return open_plugin_problem("arena", "layout = \"" + std::string(TESSERA_SOURCE_DIR) +
                                          "/problems/arenas/deceptive.txt\"\nduration = 10.0\n");
}

Run make_run(std::shared_ptr<const Problem> problem, PopulationAlgorithm algorithm,
             std::size_t threads, std::uint64_t budget, std::uint64_t seed = 5) {
  Run r;
  r.problem = std::move(problem);
  r.evaluator = std::make_shared<ThreadEvaluator>(r.problem, threads);
  SearchSettings s;
  s.seed = seed;
  s.batch = 50;
  s.evaluations = budget;
  PopulationSettings p;
  p.novelty.window = 500;  // several adaptations within the short runs
  VariationSettings v;
  v.op = VariationOperator::gaussian;
  const auto& info = r.problem->info();
  auto space = std::make_shared<GridSpace>(info.descriptor, info.descriptor_names,
                                           std::vector<std::int64_t>{16, 16});
  auto ev = r.evaluator;
  r.search = std::make_unique<PopulationSearch>(
      algorithm, s, p, v, space, info.genome, info.fitness_lower,
      [ev](Batch& b) { ev->evaluate(b); }, info.extra_names.size());
  return r;
}

void finish(Run& r) {
  while (!r.search->finished()) r.search->step();
}

ArchiveSnapshot saved(const Run& r) {
  ArchiveSnapshot s;
  r.search->save(s);
  s.problem = r.problem->info().name;
  s.extra_names = r.problem->info().extra_names;
  return s;
}

void require_same(const ArchiveSnapshot& a, const ArchiveSnapshot& b) {
  REQUIRE(a.space_kind == b.space_kind);
  REQUIRE(a.cell == b.cell);
  REQUIRE(a.fitness == b.fitness);  // bit-identical
  REQUIRE(a.genome == b.genome);
  REQUIRE(a.descriptor == b.descriptor);
  REQUIRE(a.birth == b.birth);
  REQUIRE(a.extras.size() == b.extras.size());
  REQUIRE(std::equal(a.extras.begin(), a.extras.end(), b.extras.begin(),
                     [](double x, double y) { return x == y || (x != x && y != y); }));
  REQUIRE(a.novelty_archive.has_value());
  REQUIRE(b.novelty_archive.has_value());
  REQUIRE(a.novelty_archive->fitness == b.novelty_archive->fitness);
  REQUIRE(a.novelty_archive->genome == b.novelty_archive->genome);
  REQUIRE(a.novelty_archive->birth == b.novelty_archive->birth);
  REQUIRE(a.history.size() == b.history.size());
  for (std::size_t i = 0; i < a.history.size(); ++i) {
    REQUIRE(a.history[i].evaluations == b.history[i].evaluations);
    REQUIRE(a.history[i].coverage == b.history[i].coverage);
    REQUIRE(a.history[i].qd_score == b.history[i].qd_score);
    REQUIRE(a.history[i].max_fitness == b.history[i].max_fitness);
  }
  REQUIRE(a.resume->arrays == b.resume->arrays);
  REQUIRE(a.resume->counters == b.resume->counters);
  REQUIRE(a.resume->next_batch == b.resume->next_batch);
}

const PopulationAlgorithm kAll[] = {PopulationAlgorithm::novelty, PopulationAlgorithm::novelty_lc,
                                    PopulationAlgorithm::objective, PopulationAlgorithm::random};

}  // namespace

TEST_CASE("the novelty archive admits exactly the children above the threshold") {
  for (auto algorithm : kAll) {
    auto run = make_run(std::make_shared<testing::ArmTestProblem>(6), algorithm, 2, 3000);
    std::size_t admitted_total = 0;
    while (!run.search->finished()) {
      const double threshold = run.search->behaviours().threshold();
      const std::size_t before = run.search->behaviours().size();
      run.search->step();
      const auto& novelty = run.search->last_novelty();
      const std::size_t above = static_cast<std::size_t>(
          std::count_if(novelty.begin(), novelty.end(), [&](double n) { return n > threshold; }));
      REQUIRE(run.search->behaviours().size() - before == above);
      admitted_total += above;
      // Every admitted behaviour is the evaluation of its genome (checked on the newest).
      if (above > 0) {
        const auto& a = run.search->behaviours();
        const std::size_t last = a.size() - 1;
        Batch check;
        check.resize(1, a.genome_size(), 2, 0);
        std::copy(a.genome(last).begin(), a.genome(last).end(), check.genome(0).begin());
        run.problem->make_instance()->evaluate(check, 0, 1);
        REQUIRE(check.fitness[0] == a.fitness(last));
        REQUIRE(check.descriptor(0)[0] == a.descriptor(last)[0]);
      }
    }
    CHECK(admitted_total > 20);
    CHECK(run.search->population_size() == 50);
    // The reference archive saw every evaluation: it holds the best max fitness of the run.
    CHECK(run.search->history().back().max_fitness == run.search->reference().max_fitness());
    CHECK(run.search->history().back().coverage == run.search->reference().coverage());
  }
}

TEST_CASE("selection makes a difference: objective beats random on fitness, novelty on spread") {
  struct Outcome {
    double last_mean = 0;  // mean fitness of the last batch of children
    double coverage = 0;
  };
  auto outcome = [](PopulationAlgorithm a) {
    auto run = make_run(std::make_shared<testing::ArmTestProblem>(6), a, 2, 4000);
    finish(run);
    const auto& f = run.search->last_batch().fitness;
    return Outcome{std::accumulate(f.begin(), f.end(), 0.0) / static_cast<double>(f.size()),
                   run.search->figures().coverage};
  };
  const auto objective = outcome(PopulationAlgorithm::objective);
  const auto random = outcome(PopulationAlgorithm::random);
  const auto novelty = outcome(PopulationAlgorithm::novelty);
  // The arm's fitness (minus the variance of 6 angles uniform in [-pi, pi], about -pi^2/3 on
  // average for random genomes) is easy to climb: the objective's children end far better.
  CHECK(random.last_mean < -2.0);
  CHECK(objective.last_mean > random.last_mean + 1.5);
  // Novelty spreads the end effector over more of the reference grid than fitness does.
  CHECK(novelty.coverage > objective.coverage);
}

TEST_CASE("invalid evaluations never enter either archive") {
  auto run = make_run(std::make_shared<testing::ArmTestProblem>(6, true),
                      PopulationAlgorithm::novelty, 2, 3000);
  finish(run);
  CHECK(run.search->counters().invalid > 50);
  const auto& a = run.search->behaviours();
  for (std::size_t i = 0; i < a.size(); ++i) REQUIRE(std::isfinite(a.fitness(i)));
  CHECK(a.size() > 0);
}

TEST_CASE("bit-identical for 1 and 2 threads, every algorithm, and on the arena") {
  for (auto algorithm : kAll) {
    ArchiveSnapshot one, two;
    {
      tbb::global_control c(tbb::global_control::max_allowed_parallelism, 1);
      auto run = make_run(std::make_shared<testing::ArmTestProblem>(6), algorithm, 1, 2000);
      finish(run);
      one = saved(run);
    }
    {
      tbb::global_control c(tbb::global_control::max_allowed_parallelism, 2);
      auto run = make_run(std::make_shared<testing::ArmTestProblem>(6), algorithm, 2, 2000);
      finish(run);
      two = saved(run);
    }
    require_same(one, two);
  }
  ArchiveSnapshot one, two;
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 1);
    auto run = make_run(arena_problem(), PopulationAlgorithm::novelty, 1, 1500);
    finish(run);
    one = saved(run);
  }
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 2);
    auto run = make_run(arena_problem(), PopulationAlgorithm::novelty, 2, 1500);
    finish(run);
    two = saved(run);
  }
  require_same(one, two);
  // A different seed gives a different archive (the comparison can fail).
  auto other = make_run(arena_problem(), PopulationAlgorithm::novelty, 2, 1500, 6);
  finish(other);
  CHECK(saved(other).fitness != one.fitness);
}

TEST_CASE("the saved elites are the reference map, with the novelty archive beside them") {
  auto run = make_run(arena_problem(), PopulationAlgorithm::novelty, 2, 600);
  finish(run);
  const ArchiveSnapshot s = saved(run);
  const EliteArchive& map = run.search->reference();
  REQUIRE(s.space_kind == "grid");
  REQUIRE(s.elite_count() == map.size());
  const std::size_t g = s.genome_size(), d = s.descriptor_size(), e = s.extra_size();
  REQUIRE(e == run.problem->info().extra_names.size());
  REQUIRE(e > 0);
  for (std::size_t i = 0; i < map.size(); ++i) {
    CHECK(s.cell[i] == map.cell(i));
    CHECK(s.fitness[i] == map.fitness(i));
    CHECK(std::equal(map.genome(i).begin(), map.genome(i).end(), s.genome.begin() + i * g));
    CHECK(std::equal(map.descriptor(i).begin(), map.descriptor(i).end(),
                     s.descriptor.begin() + i * d));
  }
  // Coverage and QD-score of /elites are those of the run's own last history row (the history
  // adds each improvement's gain as it goes: equal up to rounding).
  double qd = 0.0;
  for (double f : s.fitness) qd += f - s.fitness_floor;
  CHECK(qd == Approx(s.history.back().qd_score).epsilon(1e-12));
  CHECK(static_cast<double>(s.elite_count()) / 256.0 == s.history.back().coverage);
  // Each elite's stored extras are those its genome evaluates to (the arena is deterministic).
  Batch batch;
  batch.resize(s.elite_count(), g, d, e);
  std::copy(s.genome.begin(), s.genome.end(), batch.genomes.begin());
  run.evaluator->evaluate(batch);
  CHECK(batch.extras == s.extras);
  CHECK(batch.fitness == s.fitness);
  // The novelty archive, row for row.
  const NoveltyArchive& behaviours = run.search->behaviours();
  REQUIRE(s.novelty_archive.has_value());
  REQUIRE(s.novelty_archive->size() == behaviours.size());
  for (std::size_t i = 0; i < behaviours.size(); ++i) {
    CHECK(s.novelty_archive->fitness[i] == behaviours.fitness(i));
    CHECK(s.novelty_archive->birth[i] == behaviours.birth(i));
  }
}

TEST_CASE("stop, write the archive file, read it, restore, continue: identical to one go") {
  namespace fs = std::filesystem;
  const fs::path dir = fs::temp_directory_path() / ("tessera-pop-" + std::to_string(::getpid()));
  fs::create_directories(dir);
  auto check = [&](std::function<std::shared_ptr<const Problem>()> problem,
                   PopulationAlgorithm algorithm, std::uint64_t stop, std::uint64_t budget) {
    auto whole = make_run(problem(), algorithm, 2, budget);
    finish(whole);
    const ArchiveSnapshot expected = saved(whole);

    auto first = make_run(problem(), algorithm, 1, stop);
    finish(first);
    const std::string path = (dir / "half.h5").string();
    write_archive_file(path, saved(first));
    const ArchiveSnapshot half = read_archive_file(path);
    REQUIRE(half.space_kind == "grid");  // the reference map is the archive's elites

    auto second = make_run(problem(), algorithm, 2, budget);
    second.search->restore(half);
    finish(second);
    require_same(saved(second), expected);
  };
  for (auto algorithm : kAll)
    check([] { return std::make_shared<testing::ArmTestProblem>(6); }, algorithm, 1200, 2500);
  check(arena_problem, PopulationAlgorithm::novelty, 600, 1500);
  check(arena_problem, PopulationAlgorithm::novelty_lc, 650, 1500);

  // Restoring into the wrong algorithm is refused.
  auto novelty =
      make_run(std::make_shared<testing::ArmTestProblem>(6), PopulationAlgorithm::novelty, 2, 200);
  finish(novelty);
  auto objective = make_run(std::make_shared<testing::ArmTestProblem>(6),
                            PopulationAlgorithm::objective, 2, 400);
  CHECK_THROWS_AS(objective.search->restore(saved(novelty)), std::invalid_argument);
  fs::remove_all(dir);
}
