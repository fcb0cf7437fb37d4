#include "report/linkage_panels.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "core/base/errors.hpp"
#include "report/svg_chart.hpp"

namespace tessera {
namespace {

namespace lk = tessera::linkage;

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", v);
  return buf;
}

struct Box {
  double x0 = std::numeric_limits<double>::infinity(), x1 = -x0, y0 = x0, y1 = -x0;
  void add(double x, double y) {
    x0 = std::min(x0, x);
    x1 = std::max(x1, x);
    y0 = std::min(y0, y);
    y1 = std::max(y1, y);
  }
};

// Everything a drawing shows: both pivots and every joint over the cycle.
Box extent(const LinkageDrawing& d) {
  Box b;
  b.add(0.0, 0.0);
  b.add(d.dims.ground, 0.0);
  for (const auto& p : d.poses) {
    b.add(p.ax, p.ay);
    b.add(p.bx, p.by);
    b.add(p.px, p.py);
  }
  return b;
}

// A frame of at most max_w x max_h pixels with equal scales on both axes, so that the drawing
// keeps the mechanism's true shape.
PlotFrame equal_frame(Box b, double left, double top, double max_w, double max_h) {
  const double pad = 0.05 * std::max(b.x1 - b.x0, b.y1 - b.y0);
  b.x0 -= pad, b.x1 += pad, b.y0 -= pad, b.y1 += pad;
  pad_range(b.x0, b.x1);
  pad_range(b.y0, b.y1);
  const double scale = std::min(max_w / (b.x1 - b.x0), max_h / (b.y1 - b.y0));
  PlotFrame f{left, top, (b.x1 - b.x0) * scale, (b.y1 - b.y0) * scale};
  f.x0 = b.x0, f.x1 = b.x1, f.y0 = b.y0, f.y1 = b.y1;
  return f;
}

std::string polyline(const PlotFrame& f, const std::vector<lk::Pose>& poses, double lk::Pose::*x,
                     double lk::Pose::*y, bool closed, const std::string& style) {
  std::string pts;
  for (std::size_t i = 0; i < poses.size(); ++i)
    pts += (i ? " " : "") + num(f.px(poses[i].*x)) + "," + num(f.py(poses[i].*y));
  return std::string(closed ? "<polygon" : "<polyline") + " fill=\"none\" " + style + " points=\"" +
         pts + "\"/>\n";
}

std::string line(const PlotFrame& f, double x1, double y1, double x2, double y2,
                 const std::string& style) {
  return "<line x1=\"" + num(f.px(x1)) + "\" y1=\"" + num(f.py(y1)) + "\" x2=\"" + num(f.px(x2)) +
         "\" y2=\"" + num(f.py(y2)) + "\" " + style + "/>\n";
}

std::string dot(const PlotFrame& f, double x, double y, double r, const std::string& style) {
  return "<circle cx=\"" + num(f.px(x)) + "\" cy=\"" + num(f.py(y)) + "\" r=\"" + num(r) + "\" " +
         style + "/>\n";
}

// Ground pivots as small triangles (the usual drawing symbol) with a circle on top.
std::string pivots(const PlotFrame& f, double ground) {
  std::string s;
  for (double x : {0.0, ground}) {
    const double cx = f.px(x), cy = f.py(0.0);
    s += "<polygon points=\"" + num(cx) + "," + num(cy) + " " + num(cx - 7) + "," + num(cy + 11) +
         " " + num(cx + 7) + "," + num(cy + 11) + "\" fill=\"#bbb\" stroke=\"#555\"/>\n";
    s += dot(f, x, 0.0, 3.5, "fill=\"#fff\" stroke=\"#222\" stroke-width=\"1.5\"");
  }
  return s;
}

const char* kPathStyle = "stroke=\"#00204d\" stroke-width=\"2\"";

std::string dims_text(const lk::Dimensions& m, const std::string& u) {
  return "ground " + tick_label(m.ground) + ", crank " + tick_label(m.crank) + ", coupler " +
         tick_label(m.coupler) + ", rocker " + tick_label(m.rocker) + " " + u + "; coupler point " +
         tick_label(m.point_distance) + " " + u + " from A at " + tick_label(m.point_angle_deg) +
         " deg off A->B";
}

}  // namespace

std::string linkage_svg(const std::string& title, const LinkageDrawing& d, const std::string& units,
                        std::size_t shown) {
  PlotFrame f = equal_frame(extent(d), 70, 40, 460, 340);
  std::string body = f.axes("x (" + units + ")", "y (" + units + ")");
  const lk::Dimensions& m = d.dims;
  // Crank circle and rocker-pin arc, thin; the coupler path, bold.
  const double r = m.crank * f.width / (f.x1 - f.x0);
  body += "<circle cx=\"" + num(f.px(0.0)) + "\" cy=\"" + num(f.py(0.0)) + "\" r=\"" + num(r) +
          "\" fill=\"none\" stroke=\"#999\" stroke-dasharray=\"4 3\"/>\n";
  body += polyline(f, d.poses, &lk::Pose::bx, &lk::Pose::by, false,
                   "stroke=\"#999\" stroke-dasharray=\"4 3\"");
  body += polyline(f, d.poses, &lk::Pose::px, &lk::Pose::py, true, kPathStyle);
  if (!d.poses.empty()) {
    const lk::Pose& p = d.poses[std::min(shown, d.poses.size() - 1)];
    const std::string link = "stroke=\"#a65e00\" stroke-width=\"3\" stroke-linecap=\"round\"";
    body += line(f, 0.0, 0.0, m.ground, 0.0, "stroke=\"#777\" stroke-width=\"2\"");
    body += line(f, 0.0, 0.0, p.ax, p.ay, link);
    body += line(f, m.ground, 0.0, p.bx, p.by, link);
    // The coupler is a rigid plate A-B-P.
    body += "<polygon points=\"" + num(f.px(p.ax)) + "," + num(f.py(p.ay)) + " " + num(f.px(p.bx)) +
            "," + num(f.py(p.by)) + " " + num(f.px(p.px)) + "," + num(f.py(p.py)) +
            "\" fill=\"#fdbf6f\" fill-opacity=\"0.5\" stroke=\"#a65e00\" stroke-width=\"2\"/>\n";
    body += dot(f, p.ax, p.ay, 3, "fill=\"#fff\" stroke=\"#222\"");
    body += dot(f, p.bx, p.by, 3, "fill=\"#fff\" stroke=\"#222\"");
    body += dot(f, p.px, p.py, 4, "fill=\"#00204d\"");
  }
  body += pivots(f, m.ground);
  // The label, one line per "; "-separated part.
  std::vector<std::string> lines;
  for (std::size_t start = 0;;) {
    const std::size_t end = d.label.find("; ", start);
    lines.push_back(d.label.substr(start, end - start));
    if (end == std::string::npos) break;
    start = end + 2;
  }
  double y = f.top + f.height + 62;
  for (const auto& text : lines) {
    body += "<text x=\"12\" y=\"" + num(y) + "\" font-size=\"12\" fill=\"#222\">" +
            xml_escape(text) + "</text>\n";
    y += 16;
  }
  return svg_element(std::max(f.left + f.width + 30, 560.0), y, title, body);
}

std::string coupler_paths_svg(const std::string& title, const std::vector<LinkageDrawing>& drawings,
                              const std::string& units) {
  constexpr double kCell = 210, kColumns = 3, kTop = 36;
  std::string body;
  for (std::size_t i = 0; i < drawings.size(); ++i) {
    const double cx = 10 + kCell * static_cast<double>(i % 3);
    const double cy = kTop + (kCell + 20) * static_cast<double>(i / 3);
    const PlotFrame f = equal_frame(extent(drawings[i]), cx + 5, cy + 5, kCell - 20, kCell - 44);
    body += "<rect x=\"" + num(cx) + "\" y=\"" + num(cy) + "\" width=\"" + num(kCell - 10) +
            "\" height=\"" + num(kCell) + "\" fill=\"none\" stroke=\"#ddd\"/>\n";
    const LinkageDrawing& d = drawings[i];
    body += line(f, 0.0, 0.0, d.dims.ground, 0.0, "stroke=\"#777\" stroke-width=\"2\"");
    if (!d.poses.empty()) {
      // The links, thin, at a crank angle of 60 degrees.
      const lk::Pose& p = d.poses[d.poses.size() / 6];
      const std::string link = "stroke=\"#a65e00\" stroke-width=\"1.2\" stroke-opacity=\"0.7\"";
      body += line(f, 0.0, 0.0, p.ax, p.ay, link);
      body += line(f, d.dims.ground, 0.0, p.bx, p.by, link);
      body += "<polygon points=\"" + num(f.px(p.ax)) + "," + num(f.py(p.ay)) + " " +
              num(f.px(p.bx)) + "," + num(f.py(p.by)) + " " + num(f.px(p.px)) + "," +
              num(f.py(p.py)) + "\" fill=\"#fdbf6f\" fill-opacity=\"0.3\" " + link + "/>\n";
    }
    body += polyline(f, d.poses, &lk::Pose::px, &lk::Pose::py, true, kPathStyle);
    body += pivots(f, d.dims.ground);
    const std::size_t cut = d.label.find("; ");
    body += "<text x=\"" + num(cx + 6) + "\" y=\"" + num(cy + kCell - 22) +
            "\" font-size=\"11\" fill=\"#222\">" + xml_escape(d.label.substr(0, cut)) + "</text>\n";
    if (cut != std::string::npos)
      body += "<text x=\"" + num(cx + 6) + "\" y=\"" + num(cy + kCell - 8) +
              "\" font-size=\"11\" fill=\"#222\">" + xml_escape(d.label.substr(cut + 2)) +
              "</text>\n";
  }
  const double rows = std::ceil(static_cast<double>(drawings.size()) / kColumns);
  return svg_element(20 + kCell * kColumns, kTop + rows * (kCell + 20) + 24, title,
                     body + "<text x=\"12\" y=\"" + num(kTop + rows * (kCell + 20) + 12) +
                         "\" font-size=\"11\" fill=\"#555\">each drawing to its own scale; " +
                         "lengths in " + xml_escape(units) + "</text>\n");
}

std::vector<ReportPanel> linkage_panels(const ArchiveSnapshot& s, const std::string& label) {
  if (!is_linkage_archive(s) || s.elite_count() == 0 || s.descriptor_size() < 2) return {};
  const lk::Options options = stored_linkage_options(s, label);
  const std::string& u = options.units;
  const std::size_t dn = s.descriptor_size();
  const auto drawing = [&](std::size_t row) {
    LinkageDrawing d;
    d.dims = elite_dimensions(s, row);
    d.poses = lk::trace(d.dims, options.settings.branch, options.settings.samples);
    d.label = tick_label(s.descriptor[row * dn]) + " x " + tick_label(s.descriptor[row * dn + 1]) +
              " " + u + "; fitness " + tick_label(s.fitness[row]) + " deg";
    return d;
  };

  const std::size_t best = static_cast<std::size_t>(
      std::max_element(s.fitness.begin(), s.fitness.end()) - s.fitness.begin());
  LinkageDrawing top = drawing(best);
  top.label = "cell " + std::to_string(s.cell[best]) + ": " + dims_text(top.dims, u) + "; path " +
              tick_label(s.descriptor[best * dn]) + " x " +
              tick_label(s.descriptor[best * dn + 1]) + " " + u + "; fitness " +
              tick_label(s.fitness[best]) + " deg";
  std::vector<ReportPanel> panels;
  panels.push_back(
      {"Linkage: best elite",
       linkage_svg("Best elite, drawn at a crank angle of 60 degrees", top, u,
                   top.poses.size() / 6),
       "The elite with the best worst-case transmission angle, to scale: ground pivots O2 and O4, "
       "crank circle and rocker-pin arc (dashed), coupler plate A-B-P and the coupler point's "
       "path (bold). " +
           std::string(kLinkageCaution) + "."});

  // A few elites spread over the occupied part of the map: the ones nearest to the corners and
  // the centre of the box the elites' (width, height) span, plus the best.
  double w0 = std::numeric_limits<double>::infinity(), w1 = -w0, h0 = w0, h1 = -w0;
  for (std::size_t i = 0; i < s.elite_count(); ++i) {
    w0 = std::min(w0, s.descriptor[i * dn]);
    w1 = std::max(w1, s.descriptor[i * dn]);
    h0 = std::min(h0, s.descriptor[i * dn + 1]);
    h1 = std::max(h1, s.descriptor[i * dn + 1]);
  }
  std::vector<std::size_t> rows = {best};
  for (const auto& [tw, th] : std::vector<std::pair<double, double>>{
           {0.15, 0.15}, {0.85, 0.15}, {0.5, 0.5}, {0.15, 0.85}, {0.85, 0.85}}) {
    const double x = w0 + tw * (w1 - w0), y = h0 + th * (h1 - h0);
    std::size_t pick = 0;
    double best_d2 = std::numeric_limits<double>::infinity();
    for (std::size_t i = 0; i < s.elite_count(); ++i) {
      // Distances relative to the spans, so that neither axis dominates.
      const double dx = (s.descriptor[i * dn] - x) / std::max(w1 - w0, 1e-300);
      const double dy = (s.descriptor[i * dn + 1] - y) / std::max(h1 - h0, 1e-300);
      if (dx * dx + dy * dy < best_d2) {
        best_d2 = dx * dx + dy * dy;
        pick = i;
      }
    }
    if (std::find(rows.begin(), rows.end(), pick) == rows.end()) rows.push_back(pick);
  }
  std::vector<LinkageDrawing> drawings;
  for (std::size_t row : rows) drawings.push_back(drawing(row));
  panels.push_back({"Linkage: coupler paths across the map",
                    coupler_paths_svg("Coupler paths of elites across the map", drawings, u),
                    "The best elite first, then the elites nearest to the corners and the centre "
                    "of the region the elites cover (path width x height, worst transmission "
                    "angle). Export any elite's geometry with `tessera export-linkage`."});
  return panels;
}

}  // namespace tessera
