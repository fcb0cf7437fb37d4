// Nearest-elite search: the k-d tree against an exhaustive search written here from the
// definition (Euclidean distance on descriptors scaled to [0, 1] by the bounds; common practice),
// with constraints, ties and k larger than the candidates. The comparison with
// scipy.spatial.cKDTree on real archives is in tests/e2e/query_reference.py.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <utility>
#include <vector>

#include "core/select/query.hpp"
#include "core/base/rng.hpp"

namespace {

tessera::ArchiveSnapshot random_snapshot(tessera::Rng& rng, std::size_t n, std::size_t d,
                                         bool lattice) {
  tessera::ArchiveSnapshot s;
  for (std::size_t i = 0; i < d; ++i) {
    s.descriptor_bounds.lower.push_back(-1.0 - static_cast<double>(i));
    s.descriptor_bounds.upper.push_back(2.0 + 3.0 * static_cast<double>(i));
    s.descriptor_names.push_back("d" + std::to_string(i));
  }
  for (std::size_t e = 0; e < n; ++e) {
    for (std::size_t i = 0; i < d; ++i) {
      const double lo = s.descriptor_bounds.lower[i], hi = s.descriptor_bounds.upper[i];
      // Lattice points give many exactly equal distances.
      const double u = lattice ? static_cast<double>(rng.below(5)) / 4.0 : rng.uniform();
      s.descriptor.push_back(lo + u * (hi - lo));
    }
    s.fitness.push_back(rng.normal());
    s.cell.push_back(static_cast<std::int64_t>(e));
  }
  return s;
}

// Every candidate sorted by (distance, row): the definition of the answer.
std::vector<std::pair<double, std::size_t>> exhaustive(const tessera::ArchiveSnapshot& s,
                                                       const tessera::EliteFilter& f,
                                                       const std::vector<double>& target) {
  const std::size_t d = s.descriptor_size();
  std::vector<std::pair<double, std::size_t>> all;
  for (std::size_t e = 0; e < s.elite_count(); ++e) {
    if (f.min_fitness && s.fitness[e] < *f.min_fitness) continue;
    bool inside = true;
    for (const auto& w : f.within) {
      const double v = s.descriptor[e * d + w.dimension];
      inside = inside && v >= w.lower && v <= w.upper;
    }
    if (!inside) continue;
    double sum = 0.0;
    for (std::size_t i = 0; i < d; ++i) {
      const double lo = s.descriptor_bounds.lower[i], hi = s.descriptor_bounds.upper[i];
      const double diff = (s.descriptor[e * d + i] - lo) / (hi - lo) - (target[i] - lo) / (hi - lo);
      sum += diff * diff;
    }
    all.push_back({std::sqrt(sum), e});
  }
  std::sort(all.begin(), all.end());
  return all;
}

void check_against_exhaustive(tessera::Rng& rng, std::size_t n, std::size_t d, bool lattice,
                              const tessera::EliteFilter& filter) {
  const auto s = random_snapshot(rng, n, d, lattice);
  const tessera::NearestElites index(s, filter);
  for (int q = 0; q < 40; ++q) {
    std::vector<double> target(d);
    for (std::size_t i = 0; i < d; ++i)
      target[i] = lattice && q % 2 ? s.descriptor[(q % n) * d + i]
                                   : rng.uniform(s.descriptor_bounds.lower[i] - 0.5,
                                                 s.descriptor_bounds.upper[i] + 0.5);
    const auto expected = exhaustive(s, filter, target);
    REQUIRE(index.size() == expected.size());
    for (std::size_t k : {std::size_t{1}, std::size_t{3}, std::size_t{17}, n + 5}) {
      const auto got = index.nearest(target, k);
      const auto scanned = index.nearest_by_scan(target, k);
      REQUIRE(got.size() == std::min(k, expected.size()));
      REQUIRE(scanned.size() == got.size());
      for (std::size_t r = 0; r < got.size(); ++r) {
        INFO("n " << n << " d " << d << " k " << k << " rank " << r);
        CHECK(got[r].elite == scanned[r].elite);
        CHECK(got[r].distance == scanned[r].distance);
        CHECK(got[r].distance == Approx(expected[r].first).margin(1e-12));
        // The same elites, except where rounding reorders exactly tied distances.
        if (r + 1 < expected.size() &&
            std::fabs(expected[r].first - expected[r + 1].first) > 1e-12 &&
            (r == 0 || std::fabs(expected[r].first - expected[r - 1].first) > 1e-12))
          CHECK(got[r].elite == expected[r].second);
      }
    }
  }
}

}  // namespace

TEST_CASE("k-d tree search equals exhaustive search") {
  tessera::Rng rng(99, 3);
  for (std::size_t d : {1, 2, 3, 6, 9}) {
    check_against_exhaustive(rng, 500, d, false, {});
    check_against_exhaustive(rng, 7, d, false, {});
  }
}

TEST_CASE("ties on lattice points resolve by elite row, as a scan in row order would") {
  tessera::Rng rng(5, 8);
  for (std::size_t d : {2, 3}) check_against_exhaustive(rng, 400, d, true, {});
  // Explicit case: four elites at the same distance from the target.
  tessera::ArchiveSnapshot s;
  s.descriptor_bounds = {{0.0, 0.0}, {1.0, 1.0}};
  s.descriptor_names = {"x", "y"};
  s.descriptor = {1.0, 0.5, 0.5, 0.0, 0.0, 0.5, 0.5, 1.0};
  s.fitness = {0, 0, 0, 0};
  s.cell = {0, 1, 2, 3};
  const tessera::NearestElites index(s, {});
  const auto got = index.nearest(std::vector<double>{0.5, 0.5}, 3);
  REQUIRE(got.size() == 3);
  CHECK(got[0].elite == 0);
  CHECK(got[1].elite == 1);
  CHECK(got[2].elite == 2);
  CHECK(got[0].distance == 0.5);
}

TEST_CASE("constraints restrict the candidates before the search") {
  tessera::Rng rng(11, 4);
  tessera::EliteFilter f;
  f.min_fitness = 0.2;
  check_against_exhaustive(rng, 600, 2, false, f);
  f.within = {{1, -1.0, 1.5}};
  check_against_exhaustive(rng, 600, 3, false, f);
  tessera::EliteFilter none;
  none.min_fitness = 1e9;
  const auto s = random_snapshot(rng, 50, 2, false);
  const tessera::NearestElites empty(s, none);
  CHECK(empty.size() == 0);
  CHECK(empty.nearest(std::vector<double>{0.0, 0.0}, 3).empty());
  CHECK(tessera::filter_elites(s, none).empty());
}

TEST_CASE("a target of the wrong dimension is refused") {
  tessera::Rng rng(1, 1);
  const auto s = random_snapshot(rng, 20, 3, false);
  const tessera::NearestElites index(s, {});
  CHECK_THROWS_AS(index.nearest(std::vector<double>{0.0, 0.0}, 1), std::invalid_argument);
}
