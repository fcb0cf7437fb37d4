#include "report/voronoi_cells.hpp"

#include <algorithm>
#include <cmath>

#include "core/select/query.hpp"

namespace tessera {
namespace {

// Keeps the part of `poly` where (p - m) . n <= 0 (Sutherland-Hodgman against one line).
Polygon2 clip(const Polygon2& poly, Point2 m, Point2 n) {
  Polygon2 out;
  const std::size_t count = poly.size();
  if (count == 0) return out;
  out.reserve(count + 1);
  const auto side = [&](Point2 p) { return (p.x - m.x) * n.x + (p.y - m.y) * n.y; };
  for (std::size_t i = 0; i < count; ++i) {
    const Point2 a = poly[i];
    const Point2 b = poly[(i + 1) % count];
    const double sa = side(a), sb = side(b);
    if (sa <= 0) out.push_back(a);
    if ((sa < 0 && sb > 0) || (sa > 0 && sb < 0)) {
      const double t = sa / (sa - sb);
      out.push_back({a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)});
    }
  }
  return out.size() >= 3 ? out : Polygon2{};
}

double radius_squared(const Polygon2& poly, Point2 c) {
  double r = 0.0;
  for (const auto& p : poly) r = std::max(r, (p.x - c.x) * (p.x - c.x) + (p.y - c.y) * (p.y - c.y));
  return r;
}

}  // namespace

double polygon_area(const Polygon2& poly) {
  double twice = 0.0;
  for (std::size_t i = 0; i < poly.size(); ++i) {
    const Point2 a = poly[i];
    const Point2 b = poly[(i + 1) % poly.size()];
    twice += a.x * b.y - b.x * a.y;
  }
  return 0.5 * twice;
}

std::vector<Polygon2> clipped_voronoi_cells(std::span<const Point2> sites, Point2 lower,
                                            Point2 upper) {
  const std::size_t n = sites.size();
  std::vector<Polygon2> cells(n);
  if (n == 0) return cells;
  // Nearest sites come from a k-d tree in plain coordinates (unit bounds: no scaling).
  std::vector<double> flat(2 * n);
  for (std::size_t i = 0; i < n; ++i) flat[2 * i] = sites[i].x, flat[2 * i + 1] = sites[i].y;
  std::vector<std::size_t> rows(n);
  for (std::size_t i = 0; i < n; ++i) rows[i] = i;
  const NearestElites index(flat, Bounds{{0.0, 0.0}, {1.0, 1.0}}, rows);

  const Polygon2 box = {lower, {upper.x, lower.y}, upper, {lower.x, upper.y}};
  for (std::size_t i = 0; i < n; ++i) {
    const Point2 c = sites[i];
    Polygon2 poly = box;
    std::size_t used = 0;  // neighbours (nearest first, the site itself among them) applied
    std::size_t k = std::min<std::size_t>(n, 16);
    bool done = false;
    while (!done) {
      const auto near = index.nearest(std::vector<double>{c.x, c.y}, k);
      for (std::size_t r = used; r < near.size() && !poly.empty(); ++r) {
        const std::size_t j = near[r].elite;
        if (j == i) continue;
        const double d = near[r].distance;
        // Beyond twice the radius a bisector lies wholly outside the cell; so do all later ones.
        if (d * d > 4.0 * radius_squared(poly, c)) {
          done = true;
          break;
        }
        const Point2 o = sites[j];
        if (o.x == c.x && o.y == c.y) {
          if (j < i) poly.clear();  // a twin with a lower index owns the cell
          continue;
        }
        poly = clip(poly, {0.5 * (c.x + o.x), 0.5 * (c.y + o.y)}, {o.x - c.x, o.y - c.y});
      }
      used = near.size();
      if (poly.empty() || used == n) done = true;
      k = std::min(n, 2 * k);
    }
    cells[i] = std::move(poly);
  }
  return cells;
}

}  // namespace tessera
