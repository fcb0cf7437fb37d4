#include "report/compare_charts.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "report/svg_chart.hpp"

namespace tessera {
namespace {

const Rgb kInk{34, 34, 34};
const Rgb kGrey{120, 120, 120};
const Rgb kAxis{85, 85, 85};

struct Axes {
  double left, top, width, height;
  double x0 = 0, x1 = 1, y0 = 0, y1 = 1;
  double px(double x) const { return left + (x - x0) / (x1 - x0) * width; }
  double py(double y) const { return top + height - (y - y0) / (y1 - y0) * height; }
};

void draw_y_axis(Canvas& c, const Axes& a, const std::string& label) {
  c.frame(a.left, a.top, a.width, a.height, kAxis, 1);
  for (double t : nice_ticks(a.y0, a.y1, 5)) {
    const double y = a.py(t);
    c.line(a.left - 5, y, a.left, y, kAxis, 1);
    c.text(a.left - 8, y + 4, tick_label(t), 11, TextAnchor::end);
  }
  c.text(a.left - 58, a.top + a.height / 2, label, 13, TextAnchor::middle, kInk, false, true);
}

void draw_x_ticks(Canvas& c, const Axes& a, const std::string& label) {
  for (double t : nice_ticks(a.x0, a.x1, 5)) {
    const double x = a.px(t);
    c.line(x, a.top + a.height, x, a.top + a.height + 5, kAxis, 1);
    c.text(x, a.top + a.height + 18, tick_label(t), 11, TextAnchor::middle);
  }
  c.text(a.left + a.width / 2, a.top + a.height + 38, label, 13, TextAnchor::middle);
}

void legend(Canvas& c, double x, double y, const std::vector<std::string>& groups) {
  for (std::size_t g = 0; g < groups.size(); ++g) {
    const double row = y + 18.0 * static_cast<double>(g);
    c.rect(x, row - 9, 14, 10, group_colour(g), 1.0);
    c.text(x + 20, row, groups[g], 12, TextAnchor::start);
  }
}

// Room for a chart's bold heading at (12, 22).
double title_width(const std::string& title) {
  return 24.0 + 1.1 * canvas_text_width(title, 15);
}

double legend_width_of(const std::vector<std::string>& groups) {
  double width = 34.0 + canvas_text_width("differs from", 10);
  for (const std::string& g : groups)
    width = std::max({width, 34.0 + canvas_text_width(g, 12), 34.0 + canvas_text_width(g, 10)});
  return width;
}

void widen(double& lo, double& hi) {
  pad_range(lo, hi);
  const double m = 0.05 * (hi - lo);
  lo -= m;
  hi += m;
}

// Deterministic horizontal spread of the points of one box, in [-0.5, 0.5).
double jitter(std::size_t i) {
  const double golden = 0.6180339887498949;
  const double f = static_cast<double>(i) * golden;
  return f - std::floor(f) - 0.5;
}

}  // namespace

std::vector<Bracket> stack_brackets(const MeasureComparison& m, double alpha) {
  const auto index_of = [&](const std::string& group) {
    for (std::size_t g = 0; g < m.groups.size(); ++g)
      if (m.groups[g].group == group) return g;
    return std::size_t{0};
  };
  std::vector<Bracket> out;
  for (const PairComparison& p : m.pairs) {
    if (significance_stars(p.p_holm, alpha).empty()) continue;
    const std::size_t ia = index_of(p.a), ib = index_of(p.b);
    out.push_back({&p, std::min(ia, ib), std::max(ia, ib), 0});
  }
  // Narrowest first, each on the lowest level where it shares no group column with a bracket
  // already there (brackets that share an end would draw their ticks on top of each other).
  std::stable_sort(out.begin(), out.end(), [](const Bracket& x, const Bracket& y) {
    return x.right - x.left < y.right - y.left;
  });
  for (std::size_t i = 0; i < out.size(); ++i) {
    for (std::size_t level = 0;; ++level) {
      bool free = true;
      for (std::size_t j = 0; j < i && free; ++j)
        free = out[j].level != level || out[j].right < out[i].left || out[i].right < out[j].left;
      if (free) {
        out[i].level = level;
        break;
      }
    }
  }
  return out;
}

std::string significance_stars(double p_holm, double alpha) {
  if (std::isnan(p_holm) || !(p_holm < alpha)) return "";
  if (p_holm < 0.001) return "***";
  if (p_holm < 0.01) return "**";
  return "*";
}

Canvas box_plot_chart(const MeasureComparison& m, double alpha) {
  const std::size_t k = m.groups.size();
  const std::vector<Bracket> brackets = stack_brackets(m, alpha);
  std::size_t levels = 0;
  for (const Bracket& b : brackets) levels = std::max(levels, b.level + 1);
  // Success bars carry their "k/n" label just above the bar, up to the top of the axes: the
  // brackets start above it.
  const double bracket_base = m.binary ? 22.0 : 6.0;
  const double bracket_space =
      16.0 * static_cast<double>(levels) + (brackets.empty() ? 0.0 : bracket_base - 6.0);
  // Each group's slot is wide enough for its label at full size with a gap to the next.
  double slot = 90.0;
  for (const GroupSummary& g : m.groups) slot = std::max(slot, canvas_text_width(g.group, 12) + 16);
  Axes a{84, 40 + bracket_space, slot * static_cast<double>(std::max<std::size_t>(k, 1)), 240};
  const std::string title = m.measure + (m.binary ? ": share of successes" : "");
  Canvas c(std::max(a.left + a.width + 24, title_width(title)), a.top + a.height + 64);
  c.text(12, 22, title, 15, TextAnchor::start, kInk, true);
  if (m.binary) {
    a.y0 = 0;
    a.y1 = 1;
  } else {
    double lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (const GroupSummary& g : m.groups)
      for (double v : g.values) lo = std::min(lo, v), hi = std::max(hi, v);
    const bool never_negative = lo >= 0;
    widen(lo, hi);
    // Shares, areas and counts have no negative values to show: the axis stops just below 0.
    if (never_negative) lo = std::max(lo, -0.05 * hi);
    a.y0 = lo;
    a.y1 = hi;
  }
  draw_y_axis(c, a, m.binary ? "share of runs" : m.measure);
  const auto centre = [&](std::size_t g) { return a.left + slot * (static_cast<double>(g) + 0.5); };
  for (std::size_t g = 0; g < k; ++g) {
    const GroupSummary& s = m.groups[g];
    const Rgb colour = group_colour(g);
    const double x = centre(g);
    const double half = slot * 0.28;
    c.text(x, a.top + a.height + 18, s.group, 12, TextAnchor::middle);
    std::string counts = "n=" + std::to_string(s.n);
    if (s.n_missing > 0) counts += ", " + std::to_string(s.n_missing) + " missing";
    c.text(x, a.top + a.height + 33, counts, 10, TextAnchor::middle, kGrey);
    if (s.n_censored > 0)
      c.text(x, a.top + a.height + 46, std::to_string(s.n_censored) + " censored", 10,
             TextAnchor::middle, kGrey);
    if (s.n == 0) {
      // Missing data stays visibly missing: no box, no zero.
      c.text(x, a.top + a.height / 2, "no data", 11, TextAnchor::middle, kGrey);
      continue;
    }
    if (m.binary) {
      const double share = static_cast<double>(s.successes) / static_cast<double>(s.n);
      c.rect(x - half, a.py(share), 2 * half, a.py(0) - a.py(share), colour, 0.55);
      c.frame(x - half, a.py(share), 2 * half, a.py(0) - a.py(share), colour, 1.2);
      c.text(x, a.py(share) - 4, std::to_string(s.successes) + "/" + std::to_string(s.n), 11,
             TextAnchor::middle);
      continue;
    }
    const double lo = *std::min_element(s.values.begin(), s.values.end());
    const double hi = *std::max_element(s.values.begin(), s.values.end());
    c.line(x, a.py(lo), x, a.py(s.q1), colour, 1.2);
    c.line(x, a.py(s.q3), x, a.py(hi), colour, 1.2);
    c.line(x - half / 2, a.py(lo), x + half / 2, a.py(lo), colour, 1.2);
    c.line(x - half / 2, a.py(hi), x + half / 2, a.py(hi), colour, 1.2);
    c.rect(x - half, a.py(s.q3), 2 * half, a.py(s.q1) - a.py(s.q3), colour, 0.18);
    c.frame(x - half, a.py(s.q3), 2 * half, a.py(s.q1) - a.py(s.q3), colour, 1.2);
    c.line(x - half, a.py(s.median), x + half, a.py(s.median), colour, 2.5);
    for (std::size_t i = 0; i < s.values.size(); ++i)
      c.circle(x + jitter(i) * half * 1.4, a.py(s.values[i]), 3, colour, s.censored[i]);
  }
  for (const Bracket& b : brackets) {
    const double y = a.top - bracket_base - 16.0 * static_cast<double>(b.level);
    const double xa = centre(b.left), xb = centre(b.right);
    c.line(xa, y + 5, xa, y, kInk, 1);
    c.line(xa, y, xb, y, kInk, 1);
    c.line(xb, y, xb, y + 5, kInk, 1);
    c.text((xa + xb) / 2, y - 2, significance_stars(b.pair->p_holm, alpha), 12, TextAnchor::middle);
  }
  return c;
}

Canvas curve_chart(const CurveComparison& cv, double alpha) {
  (void)alpha;  // the marks are already the significant tests
  Axes a{84, 40, 420, 240};
  std::vector<std::string> names;
  for (const CurveGroup& g : cv.groups) names.push_back(g.group);
  double legend_width = legend_width_of(names);
  const std::string title = cv.measure + " over evaluations";
  Canvas c(std::max(a.left + a.width + 20 + legend_width, title_width(title)),
           a.top + a.height + 70);
  c.text(12, 22, title, 15, TextAnchor::start, kInk, true);
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (const CurveGroup& g : cv.groups)
    for (std::size_t i = 0; i < g.median.size(); ++i)
      if (g.n[i] > 0) lo = std::min(lo, g.q1[i]), hi = std::max(hi, g.q3[i]);
  widen(lo, hi);
  a.y0 = lo;
  a.y1 = hi;
  a.x0 = 0;
  a.x1 = cv.checkpoints.empty() ? 1.0 : static_cast<double>(cv.checkpoints.back());
  pad_range(a.x0, a.x1);
  draw_y_axis(c, a, cv.measure);
  draw_x_ticks(c, a, "evaluations");
  for (std::size_t g = 0; g < cv.groups.size(); ++g) {
    const CurveGroup& cg = cv.groups[g];
    const Rgb colour = group_colour(g);
    // Bands and lines are broken where a checkpoint has no run: missing is not drawn as zero.
    std::size_t i = 0;
    while (i < cv.checkpoints.size()) {
      if (cg.n[i] == 0) {
        ++i;
        continue;
      }
      std::size_t j = i;
      while (j < cv.checkpoints.size() && cg.n[j] > 0) ++j;
      std::vector<CanvasPoint> band, line;
      for (std::size_t t = i; t < j; ++t) {
        const double x = a.px(static_cast<double>(cv.checkpoints[t]));
        band.push_back({x, a.py(cg.q3[t])});
        line.push_back({x, a.py(cg.median[t])});
      }
      for (std::size_t t = j; t-- > i;)
        band.push_back({a.px(static_cast<double>(cv.checkpoints[t])), a.py(cg.q1[t])});
      if (j - i > 1) {
        c.polygon(band, colour, 0.18);
        c.polyline(line, colour, 2);
      } else {
        c.circle(line[0].first, line[0].second, 2.5, colour);
      }
      i = j;
    }
  }
  for (const CurveMark& mark : cv.marks) {
    std::size_t g = 0;
    while (g < cv.groups.size() && cv.groups[g].group != mark.group) ++g;
    if (g == cv.groups.size()) continue;
    const double x = a.px(static_cast<double>(cv.checkpoints[mark.checkpoint]));
    const double y = a.py(cv.groups[g].median[mark.checkpoint]);
    c.circle(x, y, 5, group_colour(g), true);
    c.circle(x, y, 2, group_colour(g));
  }
  legend(c, a.left + a.width + 16, a.top + 10, names);
  const double ly = a.top + 22 + 18.0 * static_cast<double>(names.size());
  c.circle(a.left + a.width + 23, ly - 4, 5, kInk, true);
  c.text(a.left + a.width + 33, ly, "differs from", 10, TextAnchor::start, kGrey);
  c.text(a.left + a.width + 33, ly + 12, cv.reference, 10, TextAnchor::start, kGrey);
  c.text(a.left, a.top + a.height + 58, "lines: median of the runs; bands: first to third quartile",
         10, TextAnchor::start, kGrey);
  return c;
}

Canvas goal_chart(const std::string& family, const std::vector<const MeasureComparison*>& goals) {
  const std::size_t k = goals.empty() ? 0 : goals.front()->groups.size();
  const double slot =
      std::max(60.0, 420.0 / std::max<double>(1.0, static_cast<double>(goals.size())));
  Axes a{84, 40, slot * static_cast<double>(std::max<std::size_t>(goals.size(), 1)), 240};
  std::vector<std::string> names;
  for (std::size_t g = 0; g < k; ++g) names.push_back(goals.front()->groups[g].group);
  double legend_width = legend_width_of(names);
  const std::string title = family + ": evaluations until the goal";
  Canvas c(std::max(a.left + a.width + 20 + legend_width, title_width(title)),
           a.top + a.height + 84);
  c.text(12, 22, title, 15, TextAnchor::start, kInk, true);
  double lo = 0, hi = -std::numeric_limits<double>::infinity(), budget = hi;
  for (const MeasureComparison* m : goals)
    for (const GroupSummary& s : m->groups)
      for (std::size_t i = 0; i < s.values.size(); ++i) {
        hi = std::max(hi, s.values[i]);
        if (s.censored[i]) budget = std::max(budget, s.values[i]);
      }
  widen(lo, hi);
  a.y0 = 0;
  a.y1 = hi;
  // Room above the budget line for its label inside the frame.
  if (std::isfinite(budget)) a.y1 = std::max(a.y1, budget * 1.1);
  draw_y_axis(c, a, "evaluations");
  if (std::isfinite(budget)) {
    c.line(a.left, a.py(budget), a.left + a.width, a.py(budget), kGrey, 1, true);
    c.text(a.left + a.width - 4, a.py(budget) - 4, "budget (censored)", 10, TextAnchor::end, kGrey);
  }
  const auto centre = [&](std::size_t goal) {
    return a.left + slot * (static_cast<double>(goal) + 0.5);
  };
  for (std::size_t goal = 0; goal < goals.size(); ++goal) {
    std::string label = goals[goal]->measure;
    if (label.starts_with(family + ".")) label = label.substr(family.size() + 1);
    c.text(centre(goal), a.top + a.height + 18, label, 11, TextAnchor::middle);
  }
  const double spread = k > 1 ? slot * 0.5 / static_cast<double>(k - 1) : 0.0;
  for (std::size_t g = 0; g < k; ++g) {
    const Rgb colour = group_colour(g);
    const double offset = k > 1 ? -slot * 0.25 + spread * static_cast<double>(g) : 0.0;
    std::vector<CanvasPoint> line;
    for (std::size_t goal = 0; goal < goals.size(); ++goal) {
      const GroupSummary& s = goals[goal]->groups[g];
      if (s.n == 0) continue;  // missing: no point, the line skips it
      const double x = centre(goal) + offset;
      c.line(x, a.py(s.q1), x, a.py(s.q3), colour, 3);
      // Half or more censored: the median is only a lower bound, drawn hollow.
      const bool median_censored = 2 * s.n_censored >= s.n;
      c.circle(x, a.py(s.median), 4, colour, median_censored);
      line.push_back({x, a.py(s.median)});
    }
    if (line.size() > 1) c.polyline(line, colour, 1);
  }
  legend(c, a.left + a.width + 16, a.top + 10, names);
  c.text(a.left, a.top + a.height + 44,
         "points: median; bars: first to third quartile; censored runs count at the budget;", 10,
         TextAnchor::start, kGrey);
  c.text(a.left, a.top + a.height + 58,
         "hollow: half or more censored, so the median is only a lower bound", 10,
         TextAnchor::start, kGrey);
  return c;
}

}  // namespace tessera
