// The map of an archive: the elites' fitness over two descriptor axes. Grid archives are drawn as
// their cells (rectangles), 2-D CVT archives as Voronoi polygons clipped to the bounds. With more
// than two descriptors (or an unstructured archive) the chosen two axes are cut into squares and
// each square shows the best elite projected onto it; one descriptor gives a single band.
#pragma once

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "core/archive/snapshot.hpp"
#include "report/png_image.hpp"
#include "report/voronoi_cells.hpp"

namespace tessera {

struct Heatmap {
  std::string x_name, y_name;  // y_name empty for one descriptor
  double x_lower = 0, x_upper = 1, y_lower = 0, y_upper = 1;

  // Rectangles: nx * ny over the box, x fastest, row 0 at y_lower; NaN = empty.
  std::int64_t nx = 0, ny = 0;
  std::vector<double> lattice;

  // Polygons (2-D CVT): one per cell, with the cell's site; NaN = empty.
  std::vector<Polygon2> polygons;
  std::vector<Point2> sites;
  std::vector<double> polygon_values;

  double value_min = 0, value_max = 1;  // colour scale (the shown elites' fitness)
  std::size_t shown = 0;                // filled rectangles or polygons
  std::string note;                     // how to read the map

  bool uses_polygons() const { return !polygons.empty(); }
  // Position of a value on the colour scale, in [0, 1].
  double scale(double value) const;
};

// Squares per axis when elites are projected (more than two descriptors, unstructured archives).
inline constexpr std::int64_t kProjectionSquares = 64;

// `axes`: two distinct descriptor indices (ignored with one descriptor).
Heatmap make_heatmap(const ArchiveSnapshot& snapshot, std::size_t axis_x, std::size_t axis_y);

// The map as an <svg> element: cells, axes named after the descriptors, a colour legend.
std::string heatmap_svg(const Heatmap& map, const std::string& title);

// The map alone as an image about `side` pixels wide (empty cells white). Polygon maps are drawn
// by nearest site per pixel, which is exactly the Voronoi cell.
RgbImage heatmap_image(const Heatmap& map, std::size_t side);

}  // namespace tessera
