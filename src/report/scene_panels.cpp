#include "report/scene_panels.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "report/svg_chart.hpp"

namespace tessera {
namespace {

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", v);
  return buf;
}

// Distinct colours for the chosen elites (first = the first chosen), readable on white.
const char* const kColours[] = {"#d62728", "#1f77b4", "#2ca02c", "#9467bd",
                                "#ff7f0e", "#8c564b", "#e377c2", "#17becf"};
const char* colour(std::size_t i) {
  return kColours[i % std::size(kColours)];
}

struct Box {
  double x0 = std::numeric_limits<double>::infinity(), x1 = -x0, y0 = x0, y1 = -x0;
  void add(double x, double y) {
    x0 = std::min(x0, x), x1 = std::max(x1, x), y0 = std::min(y0, y), y1 = std::max(y1, y);
  }
  void add(const Figure& figure) {
    for (const auto& item : figure.items) {
      if (item.kind == FigureKind::series || item.kind == FigureKind::note ||
          item.kind == FigureKind::descriptor_map)
        continue;
      const std::size_t c = item.x_column();
      for (std::size_t r = 0; r < item.rows(); ++r) {
        const double x = item.at(r, c), y = item.at(r, c + 1);
        const double radius = item.kind == FigureKind::circles ? item.at(r, 2) : 0.0;
        add(x - radius, y - radius);
        add(x + radius, y + radius);
      }
    }
  }
};

// A frame of at most max_w x max_h pixels with equal scales on both axes, so that drawings keep
// their true shape.
PlotFrame equal_frame(Box b, double left, double top, double max_w, double max_h) {
  if (!(b.x1 >= b.x0)) b = Box{}, b.add(0, 0), b.add(1, 1);
  const double pad = 0.04 * std::max(b.x1 - b.x0, b.y1 - b.y0);
  b.x0 -= pad, b.x1 += pad, b.y0 -= pad, b.y1 += pad;
  pad_range(b.x0, b.x1);
  pad_range(b.y0, b.y1);
  const double scale = std::min(max_w / (b.x1 - b.x0), max_h / (b.y1 - b.y0));
  PlotFrame f{left, top, (b.x1 - b.x0) * scale, (b.y1 - b.y0) * scale};
  f.x0 = b.x0, f.x1 = b.x1, f.y0 = b.y0, f.y1 = b.y1;
  return f;
}

std::string points_text(const PlotFrame& f, const FigureItem& item) {
  const std::size_t c = item.x_column();
  std::string pts;
  for (std::size_t r = 0; r < item.rows(); ++r)
    pts += (r ? " " : "") + num(f.px(item.at(r, c))) + "," + num(f.py(item.at(r, c + 1)));
  return pts;
}

std::string line_shape(const PlotFrame& f, const FigureItem& item, const std::string& style) {
  return std::string(item.closed ? "<polygon" : "<polyline") + " fill=\"none\" " + style +
         " points=\"" + points_text(f, item) + "\"/>\n";
}

std::string label(double x, double y, const std::string& text, const char* anchor = "start") {
  return "<text x=\"" + num(x) + "\" y=\"" + num(y) + "\" font-size=\"10\" fill=\"#555\" " +
         "text-anchor=\"" + anchor + "\">" + xml_escape(text) + "</text>\n";
}

// A fixed point: a grey triangle under a small circle (the drawing symbol of a ground pivot).
std::string anchor_mark(double cx, double cy) {
  return "<polygon points=\"" + num(cx) + "," + num(cy) + " " + num(cx - 7) + "," + num(cy + 11) +
         " " + num(cx + 7) + "," + num(cy + 11) + "\" fill=\"#bbb\" stroke=\"#555\"/>\n" +
         "<circle cx=\"" + num(cx) + "\" cy=\"" + num(cy) +
         "\" r=\"3.5\" fill=\"#fff\" stroke=\"#222\" stroke-width=\"1.5\"/>\n";
}

// Static geometry, by style; labels where a name says what a place is.
std::string draw_scene(const PlotFrame& f, const Figure& scene, bool labels) {
  std::string s, anchors;
  const double scale = f.width / (f.x1 - f.x0);
  for (const auto& item : scene.items) {
    switch (item.kind) {
      case FigureKind::polyline:
        s += line_shape(f, item,
                        item.style == FigureStyle::wall
                            ? "stroke=\"#222\" stroke-width=\"2.5\" stroke-linecap=\"round\""
                        : item.style == FigureStyle::guide
                            ? "stroke=\"#999\" stroke-dasharray=\"4 3\""
                            : "stroke=\"#555\" stroke-width=\"1.2\"");
        break;
      case FigureKind::circles:
        for (std::size_t r = 0; r < item.rows(); ++r) {
          const double cx = f.px(item.at(r, 0)), cy = f.py(item.at(r, 1));
          const std::string shape = "<circle cx=\"" + num(cx) + "\" cy=\"" + num(cy) + "\" r=\"" +
                                    num(item.at(r, 2) * scale) + "\" ";
          s += shape + (item.style == FigureStyle::zone
                            ? "fill=\"#2ca02c\" fill-opacity=\"0.25\" stroke=\"#2ca02c\"/>\n"
                            : "fill=\"none\" stroke=\"#888\" stroke-dasharray=\"4 3\"/>\n");
          if (labels && item.style != FigureStyle::guide)
            s += label(cx, cy + 4, item.name, "middle");
          if (labels && item.style == FigureStyle::guide && item.rows() == 1 &&
              item.at(r, 2) * scale < 60)
            s += label(cx, cy + 4, item.name, "middle");
        }
        break;
      case FigureKind::points:
        for (std::size_t r = 0; r < item.rows(); ++r) {
          const std::size_t c = item.x_column();
          const double cx = f.px(item.at(r, c)), cy = f.py(item.at(r, c + 1));
          if (item.style == FigureStyle::anchor)
            anchors += anchor_mark(cx, cy);
          else
            s += "<circle cx=\"" + num(cx) + "\" cy=\"" + num(cy) + "\" r=\"3\" fill=\"#555\"/>\n";
          if (labels) anchors += label(cx + 8, cy - 6, item.name);
        }
        break;
      default:
        break;
    }
  }
  return s + anchors;  // markers on top of lines
}

// One elite's trace in its colour: paths with an end mark, guides dashed, the body thick with
// joint dots, points as small dots.
std::string draw_trace(const PlotFrame& f, const Figure& trace, const char* c, bool thin,
                       bool guides = true) {
  std::string s;
  const std::string stroke = std::string("stroke=\"") + c + "\"";
  for (const auto& item : trace.items) {
    if (item.rows() == 0) continue;
    const std::size_t xc = item.x_column();
    if (item.kind == FigureKind::polyline) {
      if (item.style == FigureStyle::body) {
        s += line_shape(f, item,
                        stroke + " stroke-width=\"" + (thin ? "1.5" : "3") +
                            "\" stroke-opacity=\"0.75\" stroke-linecap=\"round\" "
                            "stroke-linejoin=\"round\"");
        if (!thin)
          for (std::size_t r = 0; r < item.rows(); ++r)
            s += "<circle cx=\"" + num(f.px(item.at(r, xc))) + "\" cy=\"" +
                 num(f.py(item.at(r, xc + 1))) + "\" r=\"2.5\" fill=\"#fff\" stroke=\"#222\"/>\n";
      } else if (item.style == FigureStyle::guide) {
        if (!guides) continue;
        s += line_shape(f, item,
                        stroke +
                            " stroke-width=\"1\" stroke-opacity=\"0.6\" "
                            "stroke-dasharray=\"4 3\"");
      } else {
        s += line_shape(f, item, stroke + " stroke-width=\"" + (thin ? "1.4" : "2") + "\"");
        if (item.has_key_column() && !item.closed) {
          const std::size_t last = item.rows() - 1;
          s += "<circle cx=\"" + num(f.px(item.at(last, xc))) + "\" cy=\"" +
               num(f.py(item.at(last, xc + 1))) + "\" r=\"3.5\" fill=\"" + c + "\"/>\n";
        }
      }
    } else if (item.kind == FigureKind::points) {
      for (std::size_t r = 0; r < item.rows(); ++r) {
        const double cx = f.px(item.at(r, xc)), cy = f.py(item.at(r, xc + 1));
        if (item.style == FigureStyle::anchor)
          s += "<circle cx=\"" + num(cx) + "\" cy=\"" + num(cy) + "\" r=\"3.5\" fill=\"#fff\" " +
               stroke + " stroke-width=\"1.5\"/>\n";
        else
          s += "<circle cx=\"" + num(cx) + "\" cy=\"" + num(cy) + "\" r=\"1.8\" fill=\"" + c +
               "\" fill-opacity=\"0.7\"/>\n";
      }
    } else if (item.kind == FigureKind::circles) {
      for (std::size_t r = 0; r < item.rows(); ++r)
        s += "<circle cx=\"" + num(f.px(item.at(r, 0))) + "\" cy=\"" + num(f.py(item.at(r, 1))) +
             "\" r=\"" + num(item.at(r, 2) * f.width / (f.x1 - f.x0)) + "\" fill=\"none\" " +
             stroke + "/>\n";
    }
  }
  return s;
}

std::string units_of(const SceneDrawing& d) {
  const std::string units = d.scene.note("units");
  return units.empty() ? "" : " (" + units + ")";
}

std::string elite_dots(const PlotFrame& f, const std::vector<double>& points) {
  // One small square per occupied pixel keeps the file small for large archives.
  std::vector<std::pair<long, long>> pixels;
  for (std::size_t i = 0; i + 1 < points.size(); i += 2)
    pixels.push_back({std::lround(f.px(points[i])), std::lround(f.py(points[i + 1]))});
  std::sort(pixels.begin(), pixels.end());
  pixels.erase(std::unique(pixels.begin(), pixels.end()), pixels.end());
  std::string d;
  for (const auto& [x, y] : pixels)
    d += "M" + std::to_string(x - 1) + " " + std::to_string(y - 1) + "h3v3h-3z";
  return d.empty() ? "" : "<path fill=\"#555\" fill-opacity=\"0.35\" d=\"" + d + "\"/>\n";
}

std::string descriptor_map_name(const Figure& scene) {
  for (const auto& item : scene.items)
    if (item.kind == FigureKind::descriptor_map) return item.name;
  return "descriptor";
}

ReportPanel overview(const SceneDrawing& d) {
  Box box;
  box.add(d.scene);
  for (std::size_t i = 0; i + 1 < d.elite_points.size(); i += 2)
    box.add(d.elite_points[i], d.elite_points[i + 1]);
  for (const auto& t : d.traces) box.add(t.figure);
  PlotFrame f = equal_frame(box, 70, 40, 520, 440);
  std::string body = f.axes("x" + units_of(d), "y" + units_of(d));
  body += draw_scene(f, d.scene, true);
  body += elite_dots(f, d.elite_points);
  // The first chosen elite last, on top.
  for (std::size_t i = d.traces.size(); i-- > 0;)
    // Construction lines of the first elite only: five sets would hide the paths.
    body += draw_trace(f, d.traces[i].figure, colour(i), d.traces.size() > 1, i == 0);
  // Legend under the drawing.
  double y = f.top + f.height + 62;
  const std::string map_name = descriptor_map_name(d.scene);
  if (!d.elite_points.empty()) {
    body += "<rect x=\"12\" y=\"" + num(y - 8) + "\" width=\"3\" height=\"3\" fill=\"#555\"/>" +
            "<text x=\"24\" y=\"" + num(y) + "\" font-size=\"11\">grey dots: the " +
            xml_escape(map_name) + " of every elite (" + std::to_string(d.elite_points.size() / 2) +
            ")</text>\n";
    y += 15;
  }
  for (std::size_t i = 0; i < d.traces.size(); ++i) {
    body += "<rect x=\"12\" y=\"" + num(y - 8) + "\" width=\"14\" height=\"4\" fill=\"" +
            colour(i) + "\"/><text x=\"32\" y=\"" + num(y) + "\" font-size=\"11\">" +
            xml_escape(d.traces[i].label) + "</text>\n";
    y += 15;
  }
  if (!d.trace_note.empty()) {
    body += "<text x=\"12\" y=\"" + num(y) + "\" font-size=\"11\" fill=\"#777\">" +
            xml_escape(d.trace_note) + "</text>\n";
    y += 15;
  }
  const std::string title =
      "Scene: " + d.problem +
      (d.traces.empty() ? std::string()
                        : ", with the traces of " + std::to_string(d.traces.size()) + " elites");
  std::string caption = "The problem's own drawing to scale, in its units" + units_of(d) + ". ";
  if (!d.elite_points.empty())
    caption += "Grey dots place every elite's descriptor in the scene (" + map_name + "). ";
  if (!d.traces.empty())
    caption +=
        "Coloured: what each chosen elite does, traced by the problem (`tessera trace` "
        "exports any elite as CSV or JSON).";
  return {title, svg_element(std::max(f.left + f.width + 30, 560.0), y + 6, title, body), caption};
}

ReportPanel one_by_one(const SceneDrawing& d) {
  constexpr double kCell = 250;
  constexpr std::size_t kColumns = 3;
  std::string body;
  const std::size_t n = d.traces.size();
  for (std::size_t i = 0; i < n; ++i) {
    const double cx = 10 + kCell * static_cast<double>(i % kColumns);
    const double cy = 36 + (kCell + 24) * static_cast<double>(i / kColumns);
    Box box;
    box.add(d.scene);
    box.add(d.traces[i].figure);
    const PlotFrame f = equal_frame(box, cx + 6, cy + 6, kCell - 22, kCell - 40);
    body += "<rect x=\"" + num(cx) + "\" y=\"" + num(cy) + "\" width=\"" + num(kCell - 10) +
            "\" height=\"" + num(kCell + 14) + "\" fill=\"none\" stroke=\"#ddd\"/>\n";
    body += draw_scene(f, d.scene, false);
    body += draw_trace(f, d.traces[i].figure, colour(i), false);
    body += "<text x=\"" + num(cx + 6) + "\" y=\"" + num(cy + kCell + 6) +
            "\" font-size=\"10.5\" fill=\"" + colour(i) + "\">" + xml_escape(d.traces[i].label) +
            "</text>\n";
  }
  const double rows = static_cast<double>((n + kColumns - 1) / kColumns);
  const std::string title = "Traces one by one: " + d.problem;
  return {title,
          svg_element(20 + kCell * static_cast<double>(std::min(n, kColumns)),
                      46 + (kCell + 24) * rows, title, body),
          "Each chosen elite alone with the scene, each to its own scale (axes omitted; the "
          "scene above gives the units)."};
}

// One chart per series item name: one line per elite when the series has one value column,
// else the first elite's columns, one line each.
std::vector<ReportPanel> series_panels(const SceneDrawing& d) {
  std::vector<std::string> names;
  for (const auto& t : d.traces)
    for (const auto& item : t.figure.items)
      if (item.kind == FigureKind::series &&
          std::find(names.begin(), names.end(), item.name) == names.end())
        names.push_back(item.name);
  std::vector<ReportPanel> panels;
  std::string charts;
  for (const auto& name : names) {
    struct Line {
      std::vector<double> x, y;
      std::string colour, label;
    };
    std::vector<Line> lines;
    std::string x_label, y_label;
    bool binary = false;
    for (std::size_t i = 0; i < d.traces.size(); ++i) {
      for (const auto& item : d.traces[i].figure.items) {
        if (item.kind != FigureKind::series || item.name != name) continue;
        x_label = item.columns[0];
        const std::size_t values = item.columns.size() - 1;
        if (values > 1 && !lines.empty()) continue;
        y_label = values == 1 ? item.columns[1] : name;
        binary = values > 1;
        for (std::size_t r = 0; r < item.rows() && binary; ++r)
          for (std::size_t c = 1; c < item.columns.size(); ++c)
            binary = binary && (item.at(r, c) == 0.0 || item.at(r, c) == 1.0);
        for (std::size_t c = 1; c < item.columns.size(); ++c) {
          Line line;
          line.colour = values == 1 ? colour(i) : colour(c - 1);
          line.label = values == 1 ? "" : item.columns[c];
          for (std::size_t r = 0; r < item.rows(); ++r) {
            line.x.push_back(item.at(r, 0));
            // Several 0/1 columns (on/off signals) would hide each other: one band each.
            line.y.push_back(binary ? item.at(r, c) * 0.8 + static_cast<double>(c - 1)
                                    : item.at(r, c));
          }
          lines.push_back(std::move(line));
        }
      }
    }
    PlotFrame f{76, 40, 300, 200};
    Box box;
    for (const auto& l : lines)
      for (std::size_t k = 0; k < l.x.size(); ++k) box.add(l.x[k], l.y[k]);
    f.x0 = box.x0, f.x1 = box.x1, f.y0 = box.y0, f.y1 = box.y1;
    pad_range(f.x0, f.x1);
    pad_range(f.y0, f.y1);
    const bool stacked = binary;
    f.y_ticks = !stacked;
    std::string body = f.axes(x_label, stacked ? "" : y_label);
    for (std::size_t k = 0; k < lines.size(); ++k) {
      std::string pts;
      for (std::size_t r = 0; r < lines[k].x.size(); ++r)
        pts += (r ? " " : "") + num(f.px(lines[k].x[r])) + "," + num(f.py(lines[k].y[r]));
      body += "<polyline fill=\"none\" stroke=\"" + lines[k].colour +
              "\" stroke-width=\"1.5\" points=\"" + pts + "\"/>\n";
      if (stacked)
        body += "<text x=\"" + num(f.left - 4) + "\" y=\"" +
                num(f.py(static_cast<double>(k) + 0.4) + 3) +
                "\" font-size=\"9\" text-anchor=\"end\">" + xml_escape(lines[k].label) +
                "</text>\n";
      else if (!lines[k].label.empty())  // a legend inside the frame, top left
        body += "<text x=\"" + num(f.left + 6) + "\" y=\"" +
                num(f.top + 14 + 12 * static_cast<double>(k)) + "\" font-size=\"10\" fill=\"" +
                lines[k].colour + "\">" + xml_escape(lines[k].label) + "</text>\n";
    }
    charts += svg_element(400, 300, name, body);
  }
  if (!charts.empty()) {
    // Each chart is its own <svg>: the panel holds them side by side in one element.
    std::string joined;
    double x = 0;
    std::size_t count = 0;
    for (std::size_t start = 0; (start = charts.find("<svg", start)) != std::string::npos;
         ++count) {
      const std::size_t end = charts.find("</svg>", start) + 6;
      std::string chart = charts.substr(start, end - start);
      chart.insert(4, " x=\"" + num(x) + "\" y=\"30\"");
      joined += chart + "\n";
      x += 405;
      start = end;
    }
    const std::string title = "Traces over time: " + d.problem;
    panels.push_back({title, svg_element(std::max(x, 420.0), 340, title, joined),
                      "The time series of the traces, against their time, phase or index "
                      "column; coloured as above (several columns: the first chosen elite's, "
                      "one band each)."});
  }
  return panels;
}

}  // namespace

std::vector<double> place_descriptors(const Figure& scene, const std::vector<double>& descriptors,
                                      std::size_t dimensions) {
  std::vector<double> out;
  for (const auto& item : scene.items) {
    if (item.kind != FigureKind::descriptor_map || dimensions == 0) continue;
    const double ix = item.values[0], sx = item.values[1], ox = item.values[2];
    const double iy = item.values[3], sy = item.values[4], oy = item.values[5];
    if (!(ix >= 0 && iy >= 0 && ix < static_cast<double>(dimensions) &&
          iy < static_cast<double>(dimensions)))
      return {};
    const auto jx = static_cast<std::size_t>(ix), jy = static_cast<std::size_t>(iy);
    for (std::size_t r = 0; r < descriptors.size() / dimensions; ++r) {
      out.push_back(ox + sx * descriptors[r * dimensions + jx]);
      out.push_back(oy + sy * descriptors[r * dimensions + jy]);
    }
    break;
  }
  return out;
}

std::vector<ReportPanel> scene_panels(const SceneDrawing& d) {
  std::vector<ReportPanel> panels = {overview(d)};
  if (d.traces.size() > 1) panels.push_back(one_by_one(d));
  for (auto& p : series_panels(d)) panels.push_back(std::move(p));
  return panels;
}

}  // namespace tessera
