// CVT cells drawn as Voronoi polygons clipped to the bounds. Checks from the definition of a
// Voronoi diagram (common practice; e.g. Okabe et al., Spatial Tessellations, 2000): the cells
// tile the box (areas sum to its area), and a point lies in the cell of its nearest site.
#include <catch2/catch.hpp>

#include <cmath>
#include <vector>

#include "core/base/rng.hpp"
#include "report/voronoi_cells.hpp"

namespace {

using tessera::Point2;

bool inside(const tessera::Polygon2& poly, Point2 p) {
  // Counter-clockwise convex polygon: p is left of (or on) every edge.
  if (poly.size() < 3) return false;
  for (std::size_t i = 0; i < poly.size(); ++i) {
    const Point2 a = poly[i], b = poly[(i + 1) % poly.size()];
    if ((b.x - a.x) * (p.y - a.y) - (b.y - a.y) * (p.x - a.x) < -1e-12) return false;
  }
  return true;
}

void check_tiling(std::size_t n, Point2 lo, Point2 hi, std::uint64_t seed, bool clustered) {
  tessera::Rng rng(seed, n);
  std::vector<Point2> sites;
  for (std::size_t i = 0; i < n; ++i) {
    if (clustered && i % 3 == 0)  // a dense cluster in one corner plus a sparse rest
      sites.push_back({lo.x + 0.05 * rng.uniform() * (hi.x - lo.x),
                       lo.y + 0.05 * rng.uniform() * (hi.y - lo.y)});
    else
      sites.push_back({rng.uniform(lo.x, hi.x), rng.uniform(lo.y, hi.y)});
  }
  const auto cells = tessera::clipped_voronoi_cells(sites, lo, hi);
  REQUIRE(cells.size() == n);
  double total = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double a = tessera::polygon_area(cells[i]);
    CHECK(a > 0.0);
    CHECK(inside(cells[i], sites[i]));
    total += a;
  }
  const double box = (hi.x - lo.x) * (hi.y - lo.y);
  INFO("n " << n << " total " << total << " box " << box);
  CHECK(std::fabs(total - box) <= 1e-6);

  // Random points: the cells holding a point are exactly those of its nearest sites.
  for (int t = 0; t < 300; ++t) {
    const Point2 p{rng.uniform(lo.x, hi.x), rng.uniform(lo.y, hi.y)};
    std::size_t best = 0;
    double best_d = 1e300;
    for (std::size_t i = 0; i < n; ++i) {
      const double d = std::hypot(p.x - sites[i].x, p.y - sites[i].y);
      if (d < best_d) best_d = d, best = i;
    }
    CHECK(inside(cells[best], p));
  }
}

}  // namespace

TEST_CASE("clipped Voronoi cells tile the box") {
  check_tiling(1, {0, 0}, {1, 1}, 1, false);
  check_tiling(2, {-1, -1}, {1, 1}, 2, false);
  check_tiling(50, {-1, -2.5}, {1, 2.5}, 3, false);
  check_tiling(1000, {-1, -1}, {1, 1}, 4, false);
  check_tiling(3000, {-256, -256}, {256, 256}, 5, true);
}

TEST_CASE("identical sites: the first keeps the cell") {
  const std::vector<Point2> sites = {{0.25, 0.5}, {0.75, 0.5}, {0.25, 0.5}};
  const auto cells = tessera::clipped_voronoi_cells(sites, {0, 0}, {1, 1});
  CHECK(tessera::polygon_area(cells[0]) == Approx(0.5));
  CHECK(tessera::polygon_area(cells[1]) == Approx(0.5));
  CHECK(cells[2].empty());
}
