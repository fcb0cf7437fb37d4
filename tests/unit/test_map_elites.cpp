// Properties of the MAP-Elites loop: elitism, monotone QD-score and coverage, determinism across
// thread counts, invalid candidates never stored, restore-and-continue equals one go.
#include <catch2/catch.hpp>

#include <tbb/global_control.h>

#include <unistd.h>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <sstream>
#include <string>

#include "core/search/map_elites.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/thread_evaluator.hpp"
#include "support/arm_problem.hpp"

using namespace tessera;

namespace {

struct Run {
  std::shared_ptr<testing::ArmTestProblem> problem;
  std::shared_ptr<ThreadEvaluator> evaluator;
  std::unique_ptr<MapElitesSearch> search;
};

Run make_run(std::size_t threads, std::uint64_t budget, bool nans = false,
             VariationOperator op = VariationOperator::iso_line_dd, std::uint64_t seed = 3,
             std::int64_t side = 20, bool one_pass = false) {
  Run r;
  r.problem = std::make_shared<testing::ArmTestProblem>(6, nans);
  r.evaluator = std::make_shared<ThreadEvaluator>(r.problem, threads);
  SearchSettings s;
  s.seed = seed;
  s.batch = 100;
  s.evaluations = budget;
  auto space =
      std::make_shared<GridSpace>(r.problem->info().descriptor, r.problem->info().descriptor_names,
                                  std::vector<std::int64_t>{side, side});
  VariationSettings v;
  v.op = op;
  auto ev = r.evaluator;
  r.search = std::make_unique<MapElitesSearch>(
      s, space, r.problem->info().genome, r.problem->info().fitness_lower,
      std::make_unique<VariationEmitter>(v), [ev](Batch& b) { ev->evaluate(b); });
  if (one_pass)
    r.search->set_range_evaluator([ev](Batch& b, std::size_t first, std::size_t count) {
      ev->evaluate_range(b, first, count);
    });
  return r;
}

void require_same(const ArchiveSnapshot& a, const ArchiveSnapshot& b) {
  REQUIRE(a.cell == b.cell);
  REQUIRE(a.fitness == b.fitness);  // bit-identical, not approximately
  REQUIRE(a.genome == b.genome);
  REQUIRE(a.descriptor == b.descriptor);
  REQUIRE(a.birth == b.birth);
  REQUIRE(a.history.size() == b.history.size());
  for (std::size_t i = 0; i < a.history.size(); ++i) {
    REQUIRE(a.history[i].evaluations == b.history[i].evaluations);
    REQUIRE(a.history[i].qd_score == b.history[i].qd_score);
    REQUIRE(a.history[i].coverage == b.history[i].coverage);
    REQUIRE(a.history[i].max_fitness == b.history[i].max_fitness);
  }
}

}  // namespace

TEST_CASE("elitism: a cell's fitness never decreases and every replacement is better") {
  // MAP-Elites keeps the best per cell (Mouret & Clune 2015): property checked batch by batch.
  for (auto op : {VariationOperator::iso_line_dd, VariationOperator::gaussian}) {
    auto run = make_run(2, 5000, false, op);
    std::map<std::int64_t, double> best;
    double last_qd = -1e300, last_cov = 0;
    while (!run.search->finished()) {
      run.search->step();
      const auto& a = run.search->archive();
      for (std::size_t i = 0; i < a.size(); ++i) {
        auto it = best.find(a.cell(i));
        if (it != best.end()) REQUIRE(a.fitness(i) >= it->second);
        best[a.cell(i)] = a.fitness(i);
      }
      REQUIRE(best.size() == a.size());  // no elite ever disappears
      const auto& row = run.search->history().back();
      REQUIRE(row.qd_score >= last_qd);
      REQUIRE(row.coverage >= last_cov);
      last_qd = row.qd_score;
      last_cov = row.coverage;
      // The incremental QD-score matches a recomputation from the elites.
      REQUIRE(row.qd_score == Approx(a.qd_score(run.problem->info().fitness_lower)).epsilon(1e-9));
      REQUIRE(row.coverage == Approx(static_cast<double>(a.size()) / 400.0));
    }
    CHECK(run.search->counters().evaluations == 5000);
    CHECK(run.search->archive().size() > 100);
  }
}

TEST_CASE("a 1000 x 1000 grid keeps the best per cell that numpy recomputes from the log") {
  // Every candidate of the run is logged (birth, validity, fitness, descriptor); numpy then
  // recomputes each cell's elite (tests/reference/best_per_cell.py) independently of the
  // archive's parallel placement and prefetching serial insertion.
  namespace fs = std::filesystem;
  const fs::path dir = fs::temp_directory_path() / ("tessera-best-" + std::to_string(::getpid()));
  fs::create_directories(dir);
  const std::string log_path = (dir / "log.csv").string();
  auto run = make_run(2, 60000, true, VariationOperator::iso_line_dd, 5, 1000);
  {
    std::ofstream log(log_path);
    char buf[64];
    std::uint64_t birth = 0;
    while (!run.search->finished()) {
      run.search->step();
      const Batch& b = run.search->last_batch();
      for (std::size_t j = 0; j < b.count; ++j) {
        log << ++birth << "," << int(b.valid[j] != 0);
        for (double v : {b.fitness[j], b.descriptor(j)[0], b.descriptor(j)[1]}) {
          std::snprintf(buf, sizeof buf, ",%.17g", v);
          log << buf;
        }
        log << "\n";
      }
    }
  }
  const auto& bounds = run.problem->info().descriptor;
  std::ostringstream grid;
  grid.precision(17);
  grid << bounds.lower[0] << "," << bounds.upper[0] << ",1000;" << bounds.lower[1] << ","
       << bounds.upper[1] << ",1000";
  const std::string out = (dir / "best.txt").string();
  const std::string cmd = "/usr/bin/python3 " + std::string(TESSERA_SOURCE_DIR) +
                          "/tests/reference/best_per_cell.py " + log_path + " \"" + grid.str() +
                          "\" > " + out;
  REQUIRE(std::system(cmd.c_str()) == 0);
  const auto& a = run.search->archive();
  std::ifstream in(out);
  std::size_t cells = 0;
  for (std::int64_t cell; in >> cell;) {
    double fitness = 0;
    std::uint64_t birth = 0;
    in >> fitness >> birth;
    const auto i = a.elite_in(cell);
    REQUIRE(i.has_value());
    REQUIRE(a.fitness(*i) == fitness);
    REQUIRE(a.birth(*i) == birth);
    ++cells;
  }
  CHECK(cells == a.size());
  CHECK(a.size() > 20000);
  fs::remove_all(dir);
}

TEST_CASE("every stored elite is the genome's own evaluation, in its own cell") {
  auto run = make_run(2, 3000);
  while (!run.search->finished()) run.search->step();
  const auto& a = run.search->archive();
  Batch check;
  check.resize(a.size(), a.genome_size(), 2, 0);
  for (std::size_t i = 0; i < a.size(); ++i)
    std::copy(a.genome(i).begin(), a.genome(i).end(), check.genome(i).begin());
  run.problem->make_instance()->evaluate(check, 0, check.count);
  for (std::size_t i = 0; i < a.size(); ++i) {
    REQUIRE(check.fitness[i] == a.fitness(i));
    REQUIRE(check.descriptor(i)[0] == a.descriptor(i)[0]);
    REQUIRE(a.space().cell_of(a.descriptor(i)).cell == a.cell(i));
  }
}

TEST_CASE("bit-identical archives for 1 and 2 threads") {
  ArchiveSnapshot one, two;
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 1);
    auto run = make_run(1, 4000);
    while (!run.search->finished()) run.search->step();
    run.search->save(one);
  }
  {
    tbb::global_control c(tbb::global_control::max_allowed_parallelism, 2);
    auto run = make_run(2, 4000);
    while (!run.search->finished()) run.search->step();
    run.search->save(two);
  }
  require_same(one, two);
  // And a different seed gives a different archive (the comparison can fail).
  auto other = make_run(2, 4000, false, VariationOperator::iso_line_dd, 4);
  while (!other.search->finished()) other.search->step();
  ArchiveSnapshot three;
  other.search->save(three);
  CHECK(three.fitness != one.fitness);
}

TEST_CASE("making, evaluating and placing chunks in one pass changes nothing") {
  // The one-pass loop (each thread makes, evaluates and places its chunks) against the loop of
  // three passes: every batch's candidates, answers and archive bit for bit, for both operators,
  // with invalid candidates, 1 and 3 threads, and a budget ending inside a batch (3,050).
  for (const auto op : {VariationOperator::iso_line_dd, VariationOperator::gaussian}) {
    for (const std::size_t threads : {1, 3}) {
      tbb::global_control c(tbb::global_control::max_allowed_parallelism, threads);
      auto three = make_run(threads, 3050, true, op);
      auto one = make_run(threads, 3050, true, op, 3, 20, /*one_pass=*/true);
      std::size_t rejected = 0;
      while (!three.search->finished()) {
        three.search->step();
        one.search->step();
        REQUIRE(one.search->last_batch().genomes == three.search->last_batch().genomes);
        const auto& a = one.search->last_results();
        const auto& b = three.search->last_results();
        REQUIRE(a.size() == b.size());
        for (std::size_t j = 0; j < a.size(); ++j) {
          REQUIRE(a[j].outcome == b[j].outcome);
          REQUIRE(a[j].cell == b[j].cell);
          rejected += a[j].outcome == Insertion::rejected;
        }
      }
      REQUIRE(one.search->finished());
      ArchiveSnapshot x, y;
      one.search->save(x);
      three.search->save(y);
      require_same(x, y);
      CHECK(rejected > 1000);  // the answers compared include many rejections
    }
  }
}

TEST_CASE("invalid candidates are counted and never stored") {
  auto run = make_run(2, 4000, /*nans=*/true);
  while (!run.search->finished()) run.search->step();
  const auto& a = run.search->archive();
  CHECK(run.search->counters().invalid > 50);
  for (std::size_t i = 0; i < a.size(); ++i) REQUIRE(std::isfinite(a.fitness(i)));
}

TEST_CASE("stop at a batch boundary, restore, continue: identical to one go") {
  auto whole = make_run(2, 3000);
  while (!whole.search->finished()) whole.search->step();
  ArchiveSnapshot expected;
  whole.search->save(expected);

  auto first = make_run(1, 1200);
  while (!first.search->finished()) first.search->step();
  ArchiveSnapshot half;
  first.search->save(half);

  auto second = make_run(2, 3000);
  second.search->restore(half);
  while (!second.search->finished()) second.search->step();
  ArchiveSnapshot resumed;
  second.search->save(resumed);
  require_same(expected, resumed);
}

TEST_CASE("the last batch is truncated to the budget exactly") {
  auto run = make_run(1, 250);
  while (!run.search->finished()) run.search->step();
  CHECK(run.search->counters().evaluations == 250);
  CHECK(run.search->history().size() == 3);
  CHECK(run.search->history().back().evaluations == 250);
}
