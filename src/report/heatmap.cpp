#include "report/heatmap.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>

#include "core/archive/nearest.hpp"
#include "report/colormap.hpp"
#include "report/svg_chart.hpp"

namespace tessera {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

void keep_max(double& slot, double value) {
  if (std::isnan(slot) || value > slot) slot = value;
}

// Square of a value along a projected axis: the grid rule of docs/archive-format.md with
// `squares` cells.
std::int64_t square_of(double v, double lo, double hi, std::int64_t squares) {
  const double k = std::floor((v - lo) / (hi - lo) * static_cast<double>(squares));
  if (!(k >= 0.0)) return 0;
  if (k >= static_cast<double>(squares)) return squares - 1;
  return static_cast<std::int64_t>(k);
}

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", v);
  return buf;
}

}  // namespace

double Heatmap::scale(double value) const {
  if (!(value_max > value_min)) return 1.0;
  return std::clamp((value - value_min) / (value_max - value_min), 0.0, 1.0);
}

Heatmap make_heatmap(const ArchiveSnapshot& s, std::size_t ax, std::size_t ay) {
  Heatmap m;
  const std::size_t d = s.descriptor_size();
  const std::size_t n = s.elite_count();
  const bool one = d == 1;
  if (one) ax = 0;
  m.x_name = s.descriptor_names[ax];
  m.x_lower = s.descriptor_bounds.lower[ax];
  m.x_upper = s.descriptor_bounds.upper[ax];
  if (!one) {
    m.y_name = s.descriptor_names[ay];
    m.y_lower = s.descriptor_bounds.lower[ay];
    m.y_upper = s.descriptor_bounds.upper[ay];
  }
  const auto value_range = [&](const std::vector<double>& values) {
    bool any = false;
    for (double v : values) {
      if (std::isnan(v)) continue;
      m.value_min = any ? std::min(m.value_min, v) : v;
      m.value_max = any ? std::max(m.value_max, v) : v;
      any = true;
      ++m.shown;
    }
  };

  if (s.space_kind == "cvt" && d == 2) {
    const std::size_t k = s.centroids.size() / 2;
    for (std::size_t c = 0; c < k; ++c)
      m.sites.push_back({s.centroids[c * 2 + ax], s.centroids[c * 2 + ay]});
    m.polygons = clipped_voronoi_cells(m.sites, {m.x_lower, m.y_lower}, {m.x_upper, m.y_upper});
    m.polygon_values.assign(k, kNaN);
    for (std::size_t e = 0; e < n; ++e)
      keep_max(m.polygon_values[static_cast<std::size_t>(s.cell[e])], s.fitness[e]);
    value_range(m.polygon_values);
    m.note =
        "Each polygon is a CVT cell (Voronoi region of its centroid, clipped to the bounds) "
        "coloured by its elite's fitness; white cells hold no elite.";
    return m;
  }

  if (s.space_kind == "grid") {
    // Per-dimension index of a flat cell: row-major, last dimension fastest.
    std::vector<std::int64_t> stride(d, 1);
    for (std::size_t i = d - 1; i > 0; --i) stride[i - 1] = stride[i] * s.resolution[i];
    m.nx = s.resolution[ax];
    m.ny = one ? 1 : s.resolution[ay];
    m.lattice.assign(static_cast<std::size_t>(m.nx * m.ny), kNaN);
    for (std::size_t e = 0; e < n; ++e) {
      const std::int64_t kx = (s.cell[e] / stride[ax]) % s.resolution[ax];
      const std::int64_t ky = one ? 0 : (s.cell[e] / stride[ay]) % s.resolution[ay];
      keep_max(m.lattice[static_cast<std::size_t>(ky * m.nx + kx)], s.fitness[e]);
    }
    m.note = d <= 2 ? "Each rectangle is a cell of the grid coloured by its elite's fitness; "
                      "white cells hold no elite."
                    : "Each rectangle shows the best elite among the grid cells projected onto "
                      "it; white: no elite.";
  } else {
    m.nx = one ? 2 * kProjectionSquares : kProjectionSquares;
    m.ny = one ? 1 : kProjectionSquares;
    m.lattice.assign(static_cast<std::size_t>(m.nx * m.ny), kNaN);
    for (std::size_t e = 0; e < n; ++e) {
      const std::int64_t kx = square_of(s.descriptor[e * d + ax], m.x_lower, m.x_upper, m.nx);
      const std::int64_t ky =
          one ? 0 : square_of(s.descriptor[e * d + ay], m.y_lower, m.y_upper, m.ny);
      keep_max(m.lattice[static_cast<std::size_t>(ky * m.nx + kx)], s.fitness[e]);
    }
    m.note =
        "Each square shows the best elite whose descriptor projects onto it; white: no "
        "elite.";
  }
  value_range(m.lattice);
  return m;
}

std::string heatmap_svg(const Heatmap& m, const std::string& title) {
  const bool one = m.y_name.empty();
  PlotFrame f{80, 40, 400, 400};
  f.x0 = m.x_lower, f.x1 = m.x_upper, f.y0 = m.y_lower, f.y1 = m.y_upper;
  std::string body = "<rect x=\"80\" y=\"40\" width=\"400\" height=\"400\" fill=\"#fff\"/>\n";

  // Cells grouped by colour (256 levels): one path per colour keeps the file small.
  std::map<int, std::string> paths;
  const auto level = [&](double v) { return static_cast<int>(std::lround(m.scale(v) * 255.0)); };
  if (m.uses_polygons()) {
    std::string empty;
    for (std::size_t c = 0; c < m.polygons.size(); ++c) {
      const auto& poly = m.polygons[c];
      if (poly.empty()) continue;
      std::string d = "M" + num(f.px(poly[0].x)) + " " + num(f.py(poly[0].y)) + "L";
      for (std::size_t i = 1; i < poly.size(); ++i)
        d += (i > 1 ? " " : "") + num(f.px(poly[i].x)) + " " + num(f.py(poly[i].y));
      d += "Z";
      if (std::isnan(m.polygon_values[c]))
        empty += d;
      else
        paths[level(m.polygon_values[c])] += d;
    }
    body += "<path fill=\"none\" stroke=\"#d4d4d4\" stroke-width=\"0.5\" d=\"" + empty + "\"/>\n";
    for (const auto& [l, d] : paths) {
      const std::string c = hex_colour(cividis(l / 255.0));
      // A thin stroke of the fill colour hides anti-aliasing seams between neighbours.
      body +=
          "<path fill=\"" + c + "\" stroke=\"" + c + "\" stroke-width=\"0.4\" d=\"" + d + "\"/>\n";
    }
  } else {
    for (std::int64_t iy = 0; iy < m.ny; ++iy)
      for (std::int64_t ix = 0; ix < m.nx; ++ix) {
        const double v = m.lattice[static_cast<std::size_t>(iy * m.nx + ix)];
        if (std::isnan(v)) continue;
        paths[level(v)] += "M" + std::to_string(ix) + " " + std::to_string(iy) + "h1v1h-1z";
      }
    // Cell units: x to the right, y upwards from the bottom-left corner of the plot.
    char scale[64];
    std::snprintf(scale, sizeof scale, "scale(%.6g,%.6g)", 400.0 / static_cast<double>(m.nx),
                  -400.0 / static_cast<double>(m.ny));
    body += "<g transform=\"translate(80,440) " + std::string(scale) +
            "\" shape-rendering=\"crispEdges\">\n";
    for (const auto& [l, d] : paths)
      body += "<path fill=\"" + hex_colour(cividis(l / 255.0)) + "\" d=\"" + d + "\"/>\n";
    body += "</g>\n";
  }
  f.y_ticks = !one;
  body += f.axes(m.x_name, m.y_name);

  // Colour legend: the anchors as gradient stops (the map interpolates linearly between them).
  std::string stops;
  const auto anchors = cividis_anchors();
  for (std::size_t i = 0; i < anchors.size(); ++i)
    stops += "<stop offset=\"" + tick_label(static_cast<double>(i) / (anchors.size() - 1)) +
             "\" stop-color=\"" + hex_colour(anchors[i]) + "\"/>";
  body += "<defs><linearGradient id=\"tessera-heat-scale\" x1=\"0\" y1=\"1\" x2=\"0\" y2=\"0\">" +
          stops + "</linearGradient></defs>\n";
  body +=
      "<rect x=\"505\" y=\"40\" width=\"18\" height=\"400\" fill=\"url(#tessera-heat-scale)\" "
      "stroke=\"#555\"/>\n<g font-size=\"11\">";
  PlotFrame bar{505, 40, 18, 400};
  bar.y0 = m.value_min, bar.y1 = m.value_max;
  pad_range(bar.y0, bar.y1);
  // The ends carry the lowest and highest fitness on the map; ticks too close to them are left
  // out, so that labels never overlap.
  const auto end_label = [&](double value, double y) {
    char text[32];
    std::snprintf(text, sizeof text, "%.4g", value);
    body += "<line x1=\"523\" y1=\"" + num(y) + "\" x2=\"530\" y2=\"" + num(y) +
            "\" stroke=\"#222\"/><text x=\"533\" y=\"" + num(y + 4) + "\" font-weight=\"bold\">" +
            xml_escape(text) + "</text>";
  };
  if (m.value_max > m.value_min) {
    for (double t : nice_ticks(bar.y0, bar.y1, 6)) {
      const double y = bar.py(t);
      if (y < 40.0 + 14.0 || y > 440.0 - 14.0) continue;
      body += "<line x1=\"523\" y1=\"" + num(y) + "\" x2=\"528\" y2=\"" + num(y) +
              "\" stroke=\"#555\"/><text x=\"531\" y=\"" + num(y + 4) + "\">" + tick_label(t) +
              "</text>";
    }
    end_label(m.value_max, 40.0);
    end_label(m.value_min, 440.0);
  } else if (std::isfinite(m.value_max)) {
    end_label(m.value_max, 40.0);  // one value: the whole bar stands for it
  }
  body +=
      "</g>\n<text transform=\"translate(590,240) rotate(-90)\" text-anchor=\"middle\" "
      "font-size=\"13\">fitness</text>\n";
  body +=
      "<rect x=\"505\" y=\"462\" width=\"18\" height=\"12\" fill=\"#fff\" stroke=\"#555\"/>"
      "<text x=\"531\" y=\"472\" font-size=\"11\">no elite</text>\n";
  return svg_element(610, 500, title, body);
}

RgbImage heatmap_image(const Heatmap& m, std::size_t side) {
  const Rgb white{255, 255, 255};
  if (m.uses_polygons()) {
    RgbImage img(side, side, white);
    std::vector<double> flat;
    for (const auto& p : m.sites) flat.insert(flat.end(), {p.x, p.y});
    const NearestCentroid nearest(flat, 2);
    std::uint32_t hint = 0;
    for (std::size_t py = 0; py < side; ++py)
      for (std::size_t px = 0; px < side; ++px) {
        const double x[2] = {m.x_lower + (px + 0.5) / side * (m.x_upper - m.x_lower),
                             m.y_upper - (py + 0.5) / side * (m.y_upper - m.y_lower)};
        hint = nearest.nearest(x, hint);
        const double v = m.polygon_values[hint];
        if (!std::isnan(v)) img.set(px, py, cividis(m.scale(v)));
      }
    return img;
  }
  const std::size_t nx = static_cast<std::size_t>(m.nx), ny = static_cast<std::size_t>(m.ny);
  const std::size_t cell = std::max<std::size_t>(1, side / std::max(nx, ny));
  const std::size_t band = ny == 1 ? std::max<std::size_t>(cell, side / 8) : cell;
  RgbImage img(nx * cell, ny * band, white);
  for (std::size_t iy = 0; iy < ny; ++iy)
    for (std::size_t ix = 0; ix < nx; ++ix) {
      const double v = m.lattice[iy * nx + ix];
      if (std::isnan(v)) continue;
      const Rgb c = cividis(m.scale(v));
      const std::size_t top = (ny - 1 - iy) * band;  // image rows run downwards
      for (std::size_t y = top; y < top + band; ++y)
        for (std::size_t x = ix * cell; x < (ix + 1) * cell; ++x) img.set(x, y, c);
    }
  return img;
}

}  // namespace tessera
