// Grid cell index and the archive's insertion rules.
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <memory>

#include "core/archive/archive.hpp"
#include "core/base/rng.hpp"
#include "core/archive/space.hpp"

using namespace tessera;

namespace {

std::shared_ptr<GridSpace> unit_grid(std::int64_t nx, std::int64_t ny) {
  return std::make_shared<GridSpace>(Bounds{{-1.0, -1.0}, {1.0, 1.0}},
                                     std::vector<std::string>{"x", "y"},
                                     std::vector<std::int64_t>{nx, ny});
}

// The README.md formula, written out independently of GridSpace.
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
  // Source: README.md archive format 1, "Grid cell of a descriptor".
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
