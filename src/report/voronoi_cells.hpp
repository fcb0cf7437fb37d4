// Voronoi cells of 2-D sites clipped to a box: how a CVT archive's niches are drawn. Each cell is
// the box cut by the bisector half-planes against the other sites, nearest sites first, stopping
// once the next site is farther than twice the cell's radius (it cannot cut the cell any more).
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace tessera {

struct Point2 {
  double x = 0.0;
  double y = 0.0;
};

using Polygon2 = std::vector<Point2>;  // vertices counter-clockwise; empty when the cell is empty

// Cell i = points of the box [lower, upper] at least as close to sites[i] as to any other site.
// Identical sites: the first keeps the cell, the later ones get an empty polygon.
std::vector<Polygon2> clipped_voronoi_cells(std::span<const Point2> sites, Point2 lower,
                                            Point2 upper);

// Signed area (shoelace formula), positive for counter-clockwise vertices.
double polygon_area(const Polygon2& polygon);

}  // namespace tessera
