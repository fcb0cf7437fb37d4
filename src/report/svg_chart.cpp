#include "report/svg_chart.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <set>
#include <utility>

#include "report/colormap.hpp"

namespace tessera {

std::string xml_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

std::string tick_label(double value) {
  if (std::fabs(value) < 1e-12) value = 0.0;  // no "-0" or "1e-17" at the origin
  char buf[32];
  // Whole numbers up to a billion in full (evaluation counts), anything else to 4 digits.
  if (std::fabs(value) >= 1000 && std::fabs(value) < 1e9 && value == std::floor(value))
    std::snprintf(buf, sizeof buf, "%.0f", value);
  else
    std::snprintf(buf, sizeof buf, "%.4g", value);
  return buf;
}

std::vector<double> nice_ticks(double lo, double hi, int count) {
  if (!(hi > lo)) return {lo};
  const double raw = (hi - lo) / std::max(1, count);
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  double step = power;
  for (double m : {1.0, 2.0, 5.0, 10.0})
    if (m * power >= raw) {
      step = m * power;
      break;
    }
  std::vector<double> ticks;
  const double first = std::ceil(lo / step - 1e-9);
  for (double k = first; k * step <= hi + step * 1e-9; k += 1.0) ticks.push_back(k * step);
  return ticks;
}

void pad_range(double& lo, double& hi) {
  if (!std::isfinite(lo) || !std::isfinite(hi)) {
    lo = 0.0;
    hi = 1.0;
  } else if (!(hi > lo)) {
    const double pad = lo == 0.0 ? 1.0 : std::fabs(lo) * 0.05;
    lo -= pad;
    hi += pad;
  }
}

double PlotFrame::px(double x) const {
  return left + (x - x0) / (x1 - x0) * width;
}
double PlotFrame::py(double y) const {
  return top + height - (y - y0) / (y1 - y0) * height;
}

namespace {

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f", v);
  return buf;
}

}  // namespace

std::string PlotFrame::axes(const std::string& x_label, const std::string& y_label) const {
  std::string s;
  s += "<rect x=\"" + num(left) + "\" y=\"" + num(top) + "\" width=\"" + num(width) +
       "\" height=\"" + num(height) + "\" fill=\"none\" stroke=\"#555\" stroke-width=\"1\"/>\n";
  s += "<g font-size=\"11\" fill=\"#222\">\n";
  for (double t : nice_ticks(x0, x1, 6)) {
    const double x = px(t);
    s += "<line x1=\"" + num(x) + "\" y1=\"" + num(top + height) + "\" x2=\"" + num(x) +
         "\" y2=\"" + num(top + height + 5) + "\" stroke=\"#555\"/>";
    s += "<text x=\"" + num(x) + "\" y=\"" + num(top + height + 18) + "\" text-anchor=\"middle\">" +
         tick_label(t) + "</text>\n";
  }
  for (double t : y_ticks ? nice_ticks(y0, y1, 5) : std::vector<double>{}) {
    const double y = py(t);
    s += "<line x1=\"" + num(left - 5) + "\" y1=\"" + num(y) + "\" x2=\"" + num(left) + "\" y2=\"" +
         num(y) + "\" stroke=\"#555\"/>";
    s += "<text x=\"" + num(left - 8) + "\" y=\"" + num(y + 4) + "\" text-anchor=\"end\">" +
         tick_label(t) + "</text>\n";
  }
  s += "</g>\n";
  s += "<text x=\"" + num(left + width / 2) + "\" y=\"" + num(top + height + 40) +
       "\" text-anchor=\"middle\" font-size=\"13\">" + xml_escape(x_label) + "</text>\n";
  if (!y_label.empty())
    s += "<text transform=\"translate(" + num(left - 58) + "," + num(top + height / 2) +
         ") rotate(-90)\" text-anchor=\"middle\" font-size=\"13\">" + xml_escape(y_label) +
         "</text>\n";
  return s;
}

std::string svg_element(double width, double height, const std::string& title,
                        const std::string& body) {
  std::string s = "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" + num(width) +
                  "\" height=\"" + num(height) + "\" viewBox=\"0 0 " + num(width) + " " +
                  num(height) + "\" font-family=\"sans-serif\">\n";
  s += "<title>" + xml_escape(title) + "</title>\n";
  s += "<rect width=\"100%\" height=\"100%\" fill=\"#fff\"/>\n";
  s += "<text x=\"12\" y=\"22\" font-size=\"15\" font-weight=\"bold\">" + xml_escape(title) +
       "</text>\n";
  return s + body + "</svg>\n";
}

std::string svg_file(const std::string& svg_element_text) {
  return "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n" + svg_element_text;
}

std::string line_chart_svg(const std::string& title, const std::string& x_label,
                           const std::string& y_label, const std::vector<double>& xs,
                           const std::vector<double>& ys, bool y_from_zero) {
  PlotFrame f{76, 40, 280, 200};
  if (xs.empty()) {
    f.x0 = 0, f.x1 = 1, f.y0 = 0, f.y1 = 1;
  } else {
    f.x0 = *std::min_element(xs.begin(), xs.end());
    f.x1 = *std::max_element(xs.begin(), xs.end());
    f.y0 = *std::min_element(ys.begin(), ys.end());
    f.y1 = *std::max_element(ys.begin(), ys.end());
    f.x0 = std::min(f.x0, 0.0);  // evaluations start at zero
    if (y_from_zero) f.y0 = std::min(f.y0, 0.0), f.y1 = std::max(f.y1, 0.0);
  }
  pad_range(f.x0, f.x1);
  pad_range(f.y0, f.y1);
  std::string body = f.axes(x_label, y_label);
  if (f.y0 > 0.0 || f.y1 < 0.0)
    body += "<text x=\"" + num(f.left + f.width) + "\" y=\"" + num(f.top - 6) +
            "\" text-anchor=\"end\" font-size=\"11\" fill=\"#555\">y axis does not start at 0" +
            "</text>\n";
  if (xs.empty()) {
    body += "<text x=\"" + num(f.left + f.width / 2) + "\" y=\"" + num(f.top + f.height / 2) +
            "\" text-anchor=\"middle\" fill=\"#777\">no history recorded</text>\n";
  } else {
    std::string points;
    for (std::size_t i = 0; i < xs.size(); ++i)
      points += (i ? " " : "") + num(f.px(xs[i])) + "," + num(f.py(ys[i]));
    body += "<polyline fill=\"none\" stroke=\"" + hex_colour(cividis(0.1)) +
            "\" stroke-width=\"2\" points=\"" + points + "\"/>\n";
    if (xs.size() == 1)
      body += "<circle cx=\"" + num(f.px(xs[0])) + "\" cy=\"" + num(f.py(ys[0])) +
              "\" r=\"3\" fill=\"" + hex_colour(cividis(0.1)) + "\"/>\n";
  }
  return svg_element(375, 300, title, body);
}

std::string front_chart_svg(const std::string& title, const std::string& x_label,
                            const std::string& y_label, const std::vector<double>& all_x,
                            const std::vector<double>& all_y, const std::vector<double>& front_x,
                            const std::vector<double>& front_y, bool join) {
  PlotFrame f{90, 40, 470, 380};
  f.x0 = *std::min_element(all_x.begin(), all_x.end());
  f.x1 = *std::max_element(all_x.begin(), all_x.end());
  f.y0 = *std::min_element(all_y.begin(), all_y.end());
  f.y1 = *std::max_element(all_y.begin(), all_y.end());
  pad_range(f.x0, f.x1);
  pad_range(f.y0, f.y1);
  // A margin, so that the front (which lies on the edge of the cloud) is not drawn on the frame.
  const double mx = 0.03 * (f.x1 - f.x0), my = 0.03 * (f.y1 - f.y0);
  f.x0 -= mx, f.x1 += mx, f.y0 -= my, f.y1 += my;
  std::string body = f.axes(x_label, y_label);
  // Candidates: one 2x2 square per occupied pixel keeps the file small for large archives.
  std::set<std::pair<long, long>> pixels;
  for (std::size_t i = 0; i < all_x.size(); ++i)
    pixels.insert({std::lround(f.px(all_x[i])), std::lround(f.py(all_y[i]))});
  std::string dots;
  for (const auto& [x, y] : pixels)
    dots += "M" + std::to_string(x - 1) + " " + std::to_string(y - 1) + "h2v2h-2z";
  body += "<path fill=\"#b8b8b8\" d=\"" + dots + "\"/>\n";
  std::string points;
  std::string marks;
  const std::string colour = hex_colour(cividis(0.0));
  for (std::size_t i = 0; i < front_x.size(); ++i) {
    const std::string x = num(f.px(front_x[i])), y = num(f.py(front_y[i]));
    points += (i ? " " : "") + x + "," + y;
    marks += "<circle cx=\"" + x + "\" cy=\"" + y + "\" r=\"3.5\"/>";
  }
  if (join)
    body += "<polyline fill=\"none\" stroke=\"" + colour + "\" stroke-width=\"1.2\" points=\"" +
            points + "\"/>\n";
  body += "<g fill=\"" + colour + "\">" + marks + "</g>\n";
  // Legend.
  body += "<g font-size=\"11\"><rect x=\"" + num(f.left + 8) + "\" y=\"" + num(f.top + 8) +
          "\" width=\"4\" height=\"4\" fill=\"#b8b8b8\"/><text x=\"" + num(f.left + 18) +
          "\" y=\"" + num(f.top + 13) + "\">elites within the constraints</text>" +
          "<circle cx=\"" + num(f.left + 10) + "\" cy=\"" + num(f.top + 24) +
          "\" r=\"3.5\" fill=\"" + colour + "\"/><text x=\"" + num(f.left + 18) + "\" y=\"" +
          num(f.top + 28) + "\">non-dominated front</text></g>\n";
  return svg_element(600, 480, title, body);
}

}  // namespace tessera
