// Small SVG building blocks for the report: text escaping, tick choice, a plot frame with axes,
// and the line and scatter charts. Every chart is a complete <svg> element that works inline in
// HTML and, with an XML declaration in front, as a standalone file.
#pragma once

#include <string>
#include <vector>

namespace tessera {

// &, <, >, " and ' as character references.
std::string xml_escape(const std::string& text);

// Short label for a tick or a figure: up to 4 significant digits.
std::string tick_label(double value);

// Round numbers (1, 2 or 5 times a power of ten) covering [lo, hi], about `count` of them, all
// within [lo, hi]. A degenerate range gives its one value.
std::vector<double> nice_ticks(double lo, double hi, int count);

// Maps data coordinates to pixels inside a plot area (y grows upwards in data, downwards in SVG).
struct PlotFrame {
  PlotFrame(double l, double t, double w, double h) : left(l), top(t), width(w), height(h) {}

  double left = 0, top = 0, width = 0, height = 0;
  double x0 = 0, x1 = 1, y0 = 0, y1 = 1;
  bool y_ticks = true;  // false: no ticks on the y axis (a one-descriptor band)

  double px(double x) const;
  double py(double y) const;
  // Frame rectangle, ticks with labels on both axes and the axis titles.
  std::string axes(const std::string& x_label, const std::string& y_label) const;
};

// Widens a degenerate or empty range so that a frame can be drawn.
void pad_range(double& lo, double& hi);

// <svg> element of the given size with a <title> and a heading line, around `body`.
std::string svg_element(double width, double height, const std::string& title,
                        const std::string& body);

// The same with an XML declaration: the content of a standalone .svg file.
std::string svg_file(const std::string& svg_element_text);

// y against x as a polyline with axes; `title` heads the chart. `y_from_zero`: the y axis starts
// at 0 (a share or a count, whose size reads off the height); otherwise it spans the data, and
// when that range leaves 0 out the chart says so.
std::string line_chart_svg(const std::string& title, const std::string& x_label,
                           const std::string& y_label, const std::vector<double>& xs,
                           const std::vector<double>& ys, bool y_from_zero = false);

// Two objectives: every candidate as a grey dot, the front as dark points (joined in the given
// order when `join`, which suits a two-objective front sorted by its first objective).
std::string front_chart_svg(const std::string& title, const std::string& x_label,
                            const std::string& y_label, const std::vector<double>& all_x,
                            const std::vector<double>& all_y, const std::vector<double>& front_x,
                            const std::vector<double>& front_y, bool join);

}  // namespace tessera
