#include "report/compare_canvas.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>

#include "report/compare_font.hpp"
#include "report/svg_chart.hpp"

namespace tessera {
namespace {

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", v);
  return buf;
}

std::string opacity_text(double o) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", o);
  return buf;
}

std::string points_text(const std::vector<CanvasPoint>& points) {
  std::string s;
  for (std::size_t i = 0; i < points.size(); ++i)
    s += (i ? " " : "") + num(points[i].first) + "," + num(points[i].second);
  return s;
}

// Pixels of an image with "source over" blending of one colour.
struct Raster {
  RgbImage image;
  void blend(long x, long y, Rgb c, double a) {
    if (x < 0 || y < 0 || x >= static_cast<long>(image.width) ||
        y >= static_cast<long>(image.height))
      return;
    const Rgb old = image.at(static_cast<std::size_t>(x), static_cast<std::size_t>(y));
    const auto mix = [a](std::uint8_t o, std::uint8_t n) {
      return static_cast<std::uint8_t>(std::lround(o * (1.0 - a) + n * a));
    };
    image.set(static_cast<std::size_t>(x), static_cast<std::size_t>(y),
              {mix(old.r, c.r), mix(old.g, c.g), mix(old.b, c.b)});
  }
  // Even-odd fill of a polygon (pixel coordinates), sampled at pixel centres.
  void fill(const std::vector<CanvasPoint>& p, Rgb c, double a) {
    if (p.size() < 3) return;
    double y_lo = p[0].second, y_hi = p[0].second;
    for (const auto& q : p) y_lo = std::min(y_lo, q.second), y_hi = std::max(y_hi, q.second);
    const long row_lo = std::max(0L, static_cast<long>(std::floor(y_lo)));
    const long row_hi = std::min(static_cast<long>(image.height) - 1, static_cast<long>(y_hi));
    std::vector<double> xs;
    for (long row = row_lo; row <= row_hi; ++row) {
      const double y = row + 0.5;
      xs.clear();
      for (std::size_t i = 0; i < p.size(); ++i) {
        const CanvasPoint& u = p[i];
        const CanvasPoint& v = p[(i + 1) % p.size()];
        if ((u.second <= y) != (v.second <= y))
          xs.push_back(u.first + (y - u.second) / (v.second - u.second) * (v.first - u.first));
      }
      std::sort(xs.begin(), xs.end());
      for (std::size_t k = 0; k + 1 < xs.size(); k += 2)
        for (long x = static_cast<long>(std::ceil(xs[k] - 0.5));
             x + 0.5 <= xs[k + 1] && x < static_cast<long>(image.width); ++x)
          blend(x, row, c, a);
    }
  }
  void segment(CanvasPoint a, CanvasPoint b, double width, Rgb c) {
    const double dx = b.first - a.first, dy = b.second - a.second;
    const double len = std::hypot(dx, dy);
    const double h = std::max(0.6, width / 2);
    if (len == 0) {
      fill({{a.first - h, a.second - h},
            {a.first + h, a.second - h},
            {a.first + h, a.second + h},
            {a.first - h, a.second + h}},
           c, 1.0);
      return;
    }
    const double nx = -dy / len * h, ny = dx / len * h;
    fill({{a.first + nx, a.second + ny},
          {b.first + nx, b.second + ny},
          {b.first - nx, b.second - ny},
          {a.first - nx, a.second - ny}},
         c, 1.0);
  }
  void disc(double cx, double cy, double r, Rgb c) {
    for (long y = static_cast<long>(std::floor(cy - r)); y <= static_cast<long>(cy + r); ++y)
      for (long x = static_cast<long>(std::floor(cx - r)); x <= static_cast<long>(cx + r); ++x)
        if (std::hypot(x + 0.5 - cx, y + 0.5 - cy) <= r) blend(x, y, c, 1.0);
  }
};

}  // namespace

Canvas::Shape Canvas::make(Kind kind, std::vector<CanvasPoint> points, Rgb colour, double width,
                           double opacity, bool flag) {
  Shape s;
  s.kind = kind;
  s.points = std::move(points);
  s.colour = colour;
  s.width = width;
  s.opacity = opacity;
  s.flag = flag;
  return s;
}

void Canvas::line(double x1, double y1, double x2, double y2, Rgb colour, double width,
                  bool dashed) {
  shapes_.push_back(make(Kind::line, {{x1, y1}, {x2, y2}}, colour, width, 1.0, dashed));
}

void Canvas::polyline(const std::vector<CanvasPoint>& points, Rgb colour, double width) {
  shapes_.push_back(make(Kind::polyline, points, colour, width));
}

void Canvas::polygon(const std::vector<CanvasPoint>& points, Rgb fill, double opacity) {
  shapes_.push_back(make(Kind::polygon, points, fill, 1.0, opacity));
}

void Canvas::rect(double x, double y, double w, double h, Rgb fill, double opacity) {
  shapes_.push_back(make(Kind::rect, {{x, y}, {x + w, y + h}}, fill, 1.0, opacity));
}

void Canvas::frame(double x, double y, double w, double h, Rgb stroke, double width) {
  shapes_.push_back(make(Kind::frame, {{x, y}, {x + w, y + h}}, stroke, width));
}

void Canvas::circle(double cx, double cy, double r, Rgb colour, bool hollow) {
  shapes_.push_back(make(Kind::circle, {{cx, cy}}, colour, r, 1.0, hollow));
}

void Canvas::text(double x, double y, const std::string& text, double size, TextAnchor anchor,
                  Rgb colour, bool bold, bool vertical) {
  Shape s = make(Kind::text, {{x, y}}, colour, size, 1.0, bold);
  s.vertical = vertical;
  s.anchor = anchor;
  s.text = text;
  shapes_.push_back(std::move(s));
}

std::string Canvas::svg(const std::string& title) const {
  std::string s = "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" + num(width_) +
                  "\" height=\"" + num(height_) + "\" viewBox=\"0 0 " + num(width_) + " " +
                  num(height_) + "\" font-family=\"sans-serif\">\n";
  s += "<title>" + xml_escape(title) + "</title>\n";
  s += "<rect width=\"100%\" height=\"100%\" fill=\"#fff\"/>\n";
  for (const Shape& sh : shapes_) {
    const std::string colour = hex_colour(sh.colour);
    const std::string op =
        sh.opacity < 1.0 ? " fill-opacity=\"" + opacity_text(sh.opacity) + "\"" : "";
    switch (sh.kind) {
      case Kind::line:
        s += "<line x1=\"" + num(sh.points[0].first) + "\" y1=\"" + num(sh.points[0].second) +
             "\" x2=\"" + num(sh.points[1].first) + "\" y2=\"" + num(sh.points[1].second) +
             "\" stroke=\"" + colour + "\" stroke-width=\"" + num(sh.width) + "\"" +
             (sh.flag ? " stroke-dasharray=\"4 3\"" : "") + "/>\n";
        break;
      case Kind::polyline:
        s += "<polyline fill=\"none\" stroke=\"" + colour + "\" stroke-width=\"" + num(sh.width) +
             "\" stroke-linejoin=\"round\" points=\"" + points_text(sh.points) + "\"/>\n";
        break;
      case Kind::polygon:
        s += "<polygon fill=\"" + colour + "\"" + op + " points=\"" + points_text(sh.points) +
             "\"/>\n";
        break;
      case Kind::rect:
        s += "<rect x=\"" + num(sh.points[0].first) + "\" y=\"" + num(sh.points[0].second) +
             "\" width=\"" + num(sh.points[1].first - sh.points[0].first) + "\" height=\"" +
             num(sh.points[1].second - sh.points[0].second) + "\" fill=\"" + colour + "\"" + op +
             "/>\n";
        break;
      case Kind::frame:
        s += "<rect x=\"" + num(sh.points[0].first) + "\" y=\"" + num(sh.points[0].second) +
             "\" width=\"" + num(sh.points[1].first - sh.points[0].first) + "\" height=\"" +
             num(sh.points[1].second - sh.points[0].second) + "\" fill=\"none\" stroke=\"" +
             colour + "\" stroke-width=\"" + num(sh.width) + "\"/>\n";
        break;
      case Kind::circle:
        s += "<circle cx=\"" + num(sh.points[0].first) + "\" cy=\"" + num(sh.points[0].second) +
             "\" r=\"" + num(sh.width) + "\"" +
             (sh.flag ? " fill=\"#fff\" stroke=\"" + colour + "\" stroke-width=\"1.5\""
                      : " fill=\"" + colour + "\"") +
             "/>\n";
        break;
      case Kind::text: {
        const char* anchor = sh.anchor == TextAnchor::start    ? "start"
                             : sh.anchor == TextAnchor::middle ? "middle"
                                                               : "end";
        const std::string x = num(sh.points[0].first), y = num(sh.points[0].second);
        s += "<text x=\"" + x + "\" y=\"" + y + "\" font-size=\"" + num(sh.width) +
             "\" text-anchor=\"" + anchor + "\" fill=\"" + colour + "\"" +
             (sh.flag ? " font-weight=\"bold\"" : "") +
             (sh.vertical ? " transform=\"rotate(-90 " + x + " " + y + ")\"" : "") + ">" +
             xml_escape(sh.text) + "</text>\n";
        break;
      }
    }
  }
  return s + "</svg>\n";
}

RgbImage Canvas::raster(double scale) const {
  Raster r;
  r.image = RgbImage(static_cast<std::size_t>(std::ceil(width_ * scale)),
                     static_cast<std::size_t>(std::ceil(height_ * scale)), {255, 255, 255});
  const auto sc = [scale](CanvasPoint p) { return CanvasPoint{p.first * scale, p.second * scale}; };
  for (const Shape& sh : shapes_) {
    switch (sh.kind) {
      case Kind::line: {
        const CanvasPoint a = sc(sh.points[0]), b = sc(sh.points[1]);
        if (!sh.flag) {
          r.segment(a, b, sh.width * scale, sh.colour);
          break;
        }
        const double len = std::hypot(b.first - a.first, b.second - a.second);
        for (double t = 0; t < len; t += 7 * scale) {
          const double t1 = std::min(len, t + 4 * scale);
          const auto at = [&](double d) {
            return CanvasPoint{a.first + (b.first - a.first) * d / len,
                               a.second + (b.second - a.second) * d / len};
          };
          r.segment(at(t), at(t1), sh.width * scale, sh.colour);
        }
        break;
      }
      case Kind::polyline:
        for (std::size_t i = 0; i + 1 < sh.points.size(); ++i)
          r.segment(sc(sh.points[i]), sc(sh.points[i + 1]), sh.width * scale, sh.colour);
        for (std::size_t i = 1; i + 1 < sh.points.size(); ++i)
          r.disc(sh.points[i].first * scale, sh.points[i].second * scale, sh.width * scale / 2,
                 sh.colour);
        break;
      case Kind::polygon: {
        std::vector<CanvasPoint> p;
        for (const auto& q : sh.points) p.push_back(sc(q));
        r.fill(p, sh.colour, sh.opacity);
        break;
      }
      case Kind::rect: {
        const CanvasPoint a = sc(sh.points[0]), b = sc(sh.points[1]);
        r.fill({a, {b.first, a.second}, b, {a.first, b.second}}, sh.colour, sh.opacity);
        break;
      }
      case Kind::frame: {
        const CanvasPoint a = sc(sh.points[0]), b = sc(sh.points[1]);
        const double w = sh.width * scale;
        r.segment(a, {b.first, a.second}, w, sh.colour);
        r.segment({b.first, a.second}, b, w, sh.colour);
        r.segment(b, {a.first, b.second}, w, sh.colour);
        r.segment({a.first, b.second}, a, w, sh.colour);
        break;
      }
      case Kind::circle: {
        const double cx = sh.points[0].first * scale, cy = sh.points[0].second * scale;
        r.disc(cx, cy, sh.width * scale, sh.colour);
        if (sh.flag) r.disc(cx, cy, std::max(0.0, sh.width * scale - 1.5 * scale), {255, 255, 255});
        break;
      }
      case Kind::text: {
        // The built-in 5x7 font, one font pixel = a square of `k` image pixels.
        const double k = std::max(1.0, std::round(sh.width * scale / 9.0));
        const double advance = 6 * k;
        const double length = advance * static_cast<double>(sh.text.size()) - k;
        double start = sh.anchor == TextAnchor::start    ? 0
                       : sh.anchor == TextAnchor::middle ? -length / 2
                                                         : -length;
        const double ox = sh.points[0].first * scale, oy = sh.points[0].second * scale;
        for (std::size_t i = 0; i < sh.text.size(); ++i) {
          const auto rows = font_glyph(sh.text[i]);
          for (int gy = 0; gy < 7; ++gy)
            for (int gx = 0; gx < 5; ++gx) {
              if (!(rows[gy] & (0x10 >> gx))) continue;
              // Along the text (u) and up from the baseline (v), in image pixels.
              const double u = start + static_cast<double>(i) * advance + gx * k;
              const double v = (7 - gy) * k;
              for (int bold = 0; bold <= (sh.flag ? 1 : 0); ++bold) {
                const double uu = u + bold * (k > 1 ? k / 2 : 1);
                const double x0 = sh.vertical ? ox - v : ox + uu;
                const double y0 = sh.vertical ? oy - uu - k : oy - v;
                r.fill({{x0, y0}, {x0 + k, y0}, {x0 + k, y0 + k}, {x0, y0 + k}}, sh.colour, 1.0);
              }
            }
        }
        break;
      }
    }
  }
  return r.image;
}

double canvas_text_width(const std::string& text, double size) {
  const double k = std::max(1.0, std::round(size * 2.0 / 9.0)) / 2.0;
  return static_cast<double>(text.size()) * std::max(6.0 * k, 0.6 * size);
}

Rgb group_colour(std::size_t index) {
  static constexpr std::array<Rgb, 8> kPalette = {{{0, 114, 178},
                                                   {213, 94, 0},
                                                   {0, 158, 115},
                                                   {230, 159, 0},
                                                   {86, 180, 233},
                                                   {204, 121, 167},
                                                   {240, 228, 66},
                                                   {0, 0, 0}}};
  return kPalette[index % kPalette.size()];
}

}  // namespace tessera
