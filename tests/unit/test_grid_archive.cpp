// Grid cell index and the archive's insertion rules.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <memory>
#include <stdexcept>
#include <vector>

#include "core/archive/archive.hpp"
#include "core/archive/space.hpp"
#include "core/base/rng.hpp"

using namespace tessera;

namespace {

std::shared_ptr<GridSpace> unit_grid(std::int64_t nx, std::int64_t ny) {
  return std::make_shared<GridSpace>(Bounds{{-1.0, -1.0}, {1.0, 1.0}},
                                     std::vector<std::string>{"x", "y"},
                                     std::vector<std::int64_t>{nx, ny});
}

// The docs/archive-format.md formula, written out independently of GridSpace.
std::int64_t formula_cell(const std::vector<double>& d, const std::vector<double>& lo,
                          const std::vector<double>& hi, const std::vector<std::int64_t>& res) {
  std::int64_t flat = 0;
  for (std::size_t i = 0; i < d.size(); ++i) {
    double k = std::floor((d[i] - lo[i]) / (hi[i] - lo[i]) * static_cast<double>(res[i]));
    k = std::min(std::max(k, 0.0), static_cast<double>(res[i] - 1));
    flat = flat * res[i] + static_cast<std::int64_t>(k);
  }
  return flat;
}

}  // namespace

TEST_CASE("grid cell index follows the archive-format formula, edges included") {
  // Source: docs/archive-format.md, "Cells".
  auto grid = unit_grid(10, 4);
  const std::vector<double> lo{-1, -1}, hi{1, 1};
  const std::vector<std::int64_t> res{10, 4};
  SECTION("exact upper bound belongs to the last cell") {
    const auto c = grid->cell_of(std::vector<double>{1.0, 1.0});
    CHECK(c.cell == 9 * 4 + 3);
    CHECK_FALSE(c.clamped);
  }
  SECTION("exact lower bound is the first cell") {
    CHECK(grid->cell_of(std::vector<double>{-1.0, -1.0}).cell == 0);
  }
  SECTION("below the lower bound goes to the edge cell and is flagged") {
    const auto c = grid->cell_of(std::vector<double>{-5.0, 0.1});
    CHECK(c.cell == formula_cell({-5.0, 0.1}, lo, hi, res));
    CHECK(c.cell == 0 * 4 + 2);
    CHECK(c.clamped);
  }
  SECTION("above the upper bound goes to the edge cell and is flagged") {
    const auto c = grid->cell_of(std::vector<double>{0.05, 7.0});
    CHECK(c.cell == 5 * 4 + 3);
    CHECK(c.clamped);
  }
  SECTION("row-major: the last dimension runs fastest") {
    CHECK(grid->cell_of(std::vector<double>{-0.95, -0.45}).cell == 1);
    CHECK(grid->cell_of(std::vector<double>{-0.75, -0.95}).cell == 4);
    CHECK(grid->unflatten(4 * 2 + 3) == std::vector<std::int64_t>{2, 3});
  }
  SECTION("random points agree with the formula") {
    Rng rng(7, 0);
    for (int i = 0; i < 10000; ++i) {
      std::vector<double> d{rng.uniform(-1.2, 1.2), rng.uniform(-1.2, 1.2)};
      CHECK(grid->cell_of(d).cell == formula_cell(d, lo, hi, res));
    }
  }
}

TEST_CASE("grid refuses impossible shapes") {
  CHECK_THROWS(GridSpace(Bounds{{0.0}, {1.0}}, {"a"}, {0}));
  CHECK_THROWS(GridSpace(Bounds{{1.0}, {1.0}}, {"a"}, {4}));
  CHECK_THROWS(GridSpace(Bounds{{0.0, 0.0}, {1.0, 1.0}}, {"a", "b"}, {4}));
  CHECK_THROWS(GridSpace(Bounds{{0, 0, 0}, {1, 1, 1}}, {"a", "b", "c"}, {1000, 1000, 1000}));
}

TEST_CASE("archive insertion: new cell, improvement, ties keep the incumbent, invalid") {
  EliteArchive archive(unit_grid(2, 2), 1);
  const std::vector<double> g1{0.1}, g2{0.2}, g3{0.3};
  const std::vector<double> d{0.5, 0.5};
  CHECK(archive.insert(g1, 1.0, d, 1).outcome == Insertion::new_cell);
  CHECK(archive.insert(g2, 1.0, d, 2).outcome == Insertion::rejected);  // tie
  CHECK(archive.genome(0)[0] == 0.1);
  CHECK(archive.insert(g3, 0.5, d, 3).outcome == Insertion::rejected);
  const auto improved = archive.insert(g3, 2.0, d, 4);
  CHECK(improved.outcome == Insertion::improved);
  CHECK(improved.replaced_fitness == 1.0);
  CHECK(archive.genome(0)[0] == 0.3);
  CHECK(archive.birth(0) == 4);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  CHECK(archive.insert(g1, nan, d, 5).outcome == Insertion::invalid);
  CHECK(archive.insert(g1, inf, d, 6).outcome == Insertion::invalid);
  CHECK(archive.insert(g1, 9.0, std::vector<double>{nan, 0.0}, 7).outcome == Insertion::invalid);
  CHECK(archive.insert(g1, 9.0, d, 8, /*valid=*/false).outcome == Insertion::invalid);
  CHECK(archive.size() == 1);
  CHECK(archive.fitness(0) == 2.0);
}

TEST_CASE("candidates placed a batch ahead and marked beaten insert as one by one") {
  // MAP-Elites keeps the best per cell (Mouret & Clune 2015): marking a candidate beaten when
  // placed, before the batch's insertions, must give the same answers and elites as inserting
  // each candidate on its own. Fitness on a coarse scale, so ties with the incumbent occur.
  EliteArchive batched(unit_grid(10, 10), 2), single(unit_grid(10, 10), 2);
  Rng rng(9, 1);
  std::size_t beaten = 0, rejected = 0;
  for (std::uint64_t batch = 0; batch < 40; ++batch) {
    std::vector<std::vector<double>> genomes(50), descriptors(50);
    std::vector<double> fitness(50);
    std::vector<Placement> placed(50);
    for (std::size_t j = 0; j < 50; ++j) {
      genomes[j] = {rng.uniform(), rng.uniform()};
      descriptors[j] = {rng.uniform(-1.0, 1.0), rng.uniform(-1.0, 1.0)};
      fitness[j] = std::floor(rng.uniform(0.0, 200.0));
      placed[j] = batched.place(genomes[j], fitness[j], descriptors[j]);
      batched.mark_if_beaten(placed[j], fitness[j]);
      beaten += placed[j].beaten;
    }
    for (std::size_t j = 0; j < 50; ++j) {
      const std::uint64_t birth = batch * 50 + j + 1;
      const auto a =
          batched.insert_placed(placed[j], genomes[j], fitness[j], descriptors[j], birth);
      const auto b = single.insert(genomes[j], fitness[j], descriptors[j], birth);
      REQUIRE(a.outcome == b.outcome);
      REQUIRE(a.cell == b.cell);
      if (placed[j].beaten) REQUIRE(a.outcome == Insertion::rejected);
      rejected += a.outcome == Insertion::rejected;
    }
  }
  REQUIRE(batched.size() == single.size());
  for (std::size_t i = 0; i < single.size(); ++i) {
    REQUIRE(batched.cell(i) == single.cell(i));
    REQUIRE(batched.fitness(i) == single.fitness(i));
    REQUIRE(batched.birth(i) == single.birth(i));
  }
  CHECK(beaten > 500);            // most late candidates are beaten when placed
  CHECK(rejected > beaten + 20);  // and some are rejected only by an earlier one of their batch

  // With acceptance thresholds (CMA-MAE) every candidate reaches the cell: never marked.
  EliteArchive thresholds(unit_grid(5, 5), 2);
  thresholds.enable_thresholds(0.5, 0.0);
  const std::vector<double> g{0.0, 0.0}, d{0.1, 0.1};
  thresholds.insert(g, 5.0, d, 1);
  Placement p = thresholds.place(g, 1.0, d);
  thresholds.mark_if_beaten(p, 1.0);
  CHECK_FALSE(p.beaten);
}

TEST_CASE("every elite keeps the extra figures of its own evaluation") {
  EliteArchive archive(unit_grid(2, 2), 1, 2);
  const std::vector<double> g{0.1};
  const std::vector<double> d{0.5, 0.5}, other{-0.5, -0.5};
  archive.insert(g, 1.0, d, 1, true, std::vector<double>{10.0, 11.0});
  archive.insert(g, 0.5, d, 2, true, std::vector<double>{20.0, 21.0});  // rejected: figures stay
  CHECK(archive.extras(0)[0] == 10.0);
  CHECK(archive.extras(0)[1] == 11.0);
  archive.insert(g, 3.0, d, 3, true, std::vector<double>{30.0, 31.0});  // improved: replaced
  CHECK(archive.extras(0)[0] == 30.0);
  CHECK(archive.extras(0)[1] == 31.0);
  archive.insert(g, 1.0, other, 4, true, std::vector<double>{40.0, 41.0});
  CHECK(archive.extras(1)[1] == 41.0);
  // Elites restored from a file without figures hold NaN: not recorded.
  archive.restore(1, g, 0.0, std::vector<double>{0.5, -0.5}, 5);
  CHECK(std::isnan(archive.extras(2)[0]));
  CHECK(std::isnan(archive.extras(2)[1]));
  // The wrong number of figures is refused before anything changes.
  CHECK_THROWS_AS(archive.insert(g, 9.0, d, 6, true, std::vector<double>{1.0}),
                  std::invalid_argument);
  CHECK(archive.size() == 3);
  CHECK(archive.fitness(0) == 3.0);
}

TEST_CASE("out-of-bounds descriptors are stored clamped into their edge cell") {
  EliteArchive archive(unit_grid(4, 4), 1);
  const auto r = archive.insert(std::vector<double>{0.0}, 1.0, std::vector<double>{3.0, -2.0}, 1);
  CHECK(r.clamped);
  CHECK(archive.descriptor(0)[0] == 1.0);
  CHECK(archive.descriptor(0)[1] == -1.0);
  CHECK(archive.space().cell_of(archive.descriptor(0)).cell == r.cell);
}

TEST_CASE("coverage and QD-score of a hand-filled archive") {
  // QD-score = sum of (fitness - offset) over elites (Pugh, Soros & Stanley 2016).
  EliteArchive archive(unit_grid(2, 2), 1);
  archive.insert(std::vector<double>{0}, -1.0, std::vector<double>{-0.5, -0.5}, 1);
  archive.insert(std::vector<double>{0}, -2.0, std::vector<double>{0.5, 0.5}, 2);
  CHECK(archive.coverage() == Approx(0.5));
  CHECK(archive.qd_score(-10.0) == Approx(9.0 + 8.0));
  CHECK(archive.max_fitness() == -1.0);
  CHECK(*archive.best() == 0);
}
