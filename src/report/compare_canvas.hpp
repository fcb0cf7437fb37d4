// A small drawing list for the comparison charts: each chart is drawn once into a Canvas, which
// then gives both the SVG element (for the page and the .svg file) and a raster image (for the
// .png file), so that the two always show the same thing. Coordinates are SVG pixels, y down.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "report/colormap.hpp"
#include "report/png_image.hpp"

namespace tessera {

using CanvasPoint = std::pair<double, double>;

enum class TextAnchor { start, middle, end };

class Canvas {
 public:
  Canvas(double width, double height) : width_(width), height_(height) {}

  void line(double x1, double y1, double x2, double y2, Rgb colour, double width,
            bool dashed = false);
  void polyline(const std::vector<CanvasPoint>& points, Rgb colour, double width);
  // Filled polygon; opacity in (0, 1].
  void polygon(const std::vector<CanvasPoint>& points, Rgb fill, double opacity);
  void rect(double x, double y, double w, double h, Rgb fill, double opacity);
  void frame(double x, double y, double w, double h, Rgb stroke, double width);
  // Filled disc, or a ring of the colour around white when `hollow`.
  void circle(double cx, double cy, double r, Rgb colour, bool hollow = false);
  // Text with its baseline at y; `vertical` turns it a quarter to the left around (x, y).
  void text(double x, double y, const std::string& text, double size, TextAnchor anchor,
            Rgb colour = {34, 34, 34}, bool bold = false, bool vertical = false);

  double width() const { return width_; }
  double height() const { return height_; }

  // Complete <svg> element with a <title>.
  std::string svg(const std::string& title) const;
  // The same drawing as pixels, `scale` pixels per SVG pixel.
  RgbImage raster(double scale) const;

 private:
  enum class Kind { line, polyline, polygon, rect, frame, circle, text };
  struct Shape {
    Kind kind = Kind::line;
    std::vector<CanvasPoint> points;
    Rgb colour;
    double width = 1.0;  // stroke width, circle radius, text size
    double opacity = 1.0;
    bool flag = false;  // dashed line, hollow circle, bold text
    bool vertical = false;
    TextAnchor anchor = TextAnchor::start;
    std::string text;
  };
  static Shape make(Kind kind, std::vector<CanvasPoint> points, Rgb colour, double width,
                    double opacity = 1.0, bool flag = false);
  double width_, height_;
  std::vector<Shape> shapes_;
};

// Width of a text on the canvas, the larger of its PNG rendering (built-in font at scale 2) and a
// typical sans-serif SVG rendering, for laying out legends and labels.
double canvas_text_width(const std::string& text, double size);

// Okabe & Ito's palette for colour-blind readers ("Color universal design", 2008; values from
// memory), black last; group i gets colour i modulo 8.
Rgb group_colour(std::size_t index);

}  // namespace tessera
