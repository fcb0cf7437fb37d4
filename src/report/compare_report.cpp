#include "report/compare_report.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>

#include "io/number_text.hpp"
#include "report/compare_charts.hpp"
#include "report/png_image.hpp"
#include "report/svg_chart.hpp"

namespace tessera {
namespace {

const char* kStyle =
    R"(body{font-family:sans-serif;max-width:1240px;margin:1.5em auto;padding:0 1em;color:#222}
h1{font-size:1.5em;margin-bottom:.2em}h2{font-size:1.2em;border-bottom:1px solid #ccc;padding-bottom:.2em;margin-top:1.6em}
.sub{color:#555;margin-top:0}.plots{display:flex;flex-wrap:wrap;gap:12px;align-items:flex-start}.note{color:#444;font-size:.92em;max-width:900px}
table{border-collapse:collapse;font-size:.92em;margin:.4em 0}td,th{border:1px solid #ddd;padding:3px 8px;text-align:left;vertical-align:top}
th{background:#f4f4f4}td.n{text-align:right;font-variant-numeric:tabular-nums}.sw{display:inline-block;width:12px;height:12px;margin-right:4px;vertical-align:-1px})";

std::string slug(const std::string& text) {
  std::string out;
  for (unsigned char c : text) {
    if (std::isalnum(c))
      out += static_cast<char>(std::tolower(c));
    else if (!out.empty() && out.back() != '-')
      out += '-';
  }
  while (!out.empty() && out.back() == '-') out.pop_back();
  return out.empty() ? "measure" : out;
}

std::string esc(const std::string& s) {
  return xml_escape(s);
}

// A missing figure is spelled out in the page; a missing p-value is a dash.
std::string figure(double v) {
  return figure_text(v, "missing");
}

std::string p_text(double v) {
  return p_value_text(v, "–");
}

std::string td(const std::string& s, bool number = false) {
  return std::string(number ? "<td class=\"n\">" : "<td>") + s + "</td>";
}

std::string note(const std::string& text) {
  return "<p class=\"note\">" + esc(text) + "</p>\n";
}

std::string group_cell(const std::vector<std::string>& groups, const std::string& g) {
  std::size_t i = 0;
  while (i < groups.size() && groups[i] != g) ++i;
  return "<span class=\"sw\" style=\"background:" + hex_colour(group_colour(i)) + "\"></span>" +
         esc(g);
}

std::string group_table(const MeasureComparison& m, const std::vector<std::string>& groups) {
  std::string t = "<table><tr><th>group</th><th>n</th><th>missing</th>";
  if (m.censored) t += "<th>censored</th>";
  if (m.binary) t += "<th>successes</th>";
  t += "<th>median</th><th>q1</th><th>q3</th></tr>\n";
  for (const GroupSummary& g : m.groups) {
    t += "<tr>" + td(group_cell(groups, g.group)) + td(std::to_string(g.n), true) +
         td(std::to_string(g.n_missing), true);
    if (m.censored) t += td(std::to_string(g.n_censored), true);
    if (m.binary) t += td(std::to_string(g.successes), true);
    t += td(figure(g.median), true) + td(figure(g.q1), true) + td(figure(g.q3), true) + "</tr>\n";
  }
  return t + "</table>\n";
}

std::string pair_rows(const MeasureComparison& m, const std::vector<std::string>& groups,
                      double alpha, bool with_measure) {
  std::string t;
  for (const PairComparison& p : m.pairs) {
    t += "<tr>";
    if (with_measure) t += td(esc(p.measure));
    t += td(group_cell(groups, p.a)) + td(group_cell(groups, p.b)) +
         td(std::to_string(p.n_a), true) + td(std::to_string(p.n_b), true) + td(figure(p.u), true) +
         td(p_text(p.p), true) + td(p_text(p.p_holm), true) +
         td(significance_stars(p.p_holm, alpha)) + td(figure(p.a12), true) + td(p.magnitude) +
         td(esc(p.test)) + "</tr>\n";
  }
  return t;
}

std::string pair_header(bool with_measure) {
  return std::string("<table><tr>") + (with_measure ? "<th>measure</th>" : "") +
         "<th>a</th><th>b</th><th>n_a</th><th>n_b</th><th>U</th><th>p</th><th>p (Holm)</th>"
         "<th></th><th>A12</th><th>effect</th><th>test</th></tr>\n";
}

std::string section(const std::string& title, const std::string& inner) {
  return "<section>\n<h2>" + esc(title) + "</h2>\n" + inner + "</section>\n";
}

}  // namespace

std::vector<std::pair<std::string, std::vector<const MeasureComparison*>>> goal_families(
    const ComparisonResult& result) {
  std::vector<std::pair<std::string, std::vector<const MeasureComparison*>>> families;
  for (const MeasureComparison& m : result.measures) {
    if (!m.censored && !m.measure.starts_with("readapt")) continue;
    const auto dot = m.measure.rfind('.');
    const std::string family = dot == std::string::npos ? m.measure : m.measure.substr(0, dot);
    auto it = std::find_if(families.begin(), families.end(),
                           [&](const auto& f) { return f.first == family; });
    if (it == families.end()) {
      families.push_back({family, {}});
      it = families.end() - 1;
    }
    it->second.push_back(&m);
  }
  return families;
}

std::vector<ReportFile> build_compare_report(const ComparisonResult& r,
                                             const CompareReportSettings& settings) {
  std::vector<ReportFile> files;
  std::vector<std::string> listed;
  const auto add_chart = [&](const Canvas& canvas, const std::string& name,
                             const std::string& title) {
    const std::string svg = canvas.svg(title);
    files.push_back({name + ".svg", svg_file(svg)});
    const std::vector<std::uint8_t> png = encode_png(canvas.raster(settings.png_scale));
    files.push_back({name + ".png", std::string(png.begin(), png.end())});
    listed.push_back(name);
    return svg;
  };

  std::string body;
  std::string legend_html;
  for (const std::string& g : r.groups) legend_html += group_cell(r.groups, g) + " &nbsp; ";
  body += "<p class=\"sub\">Groups: " + legend_html + "</p>\n";
  body += note(
      "Each pair of groups is tested with the two-sided Mann-Whitney U test (exact for small "
      "samples without ties, otherwise the normal approximation with tie and continuity "
      "correction) or, for success measures, Fisher's exact test. p-values are corrected with "
      "Holm's step-down method over all pairs of the same measure; stars mark corrected p < " +
      figure(r.alpha) + " (* < " + figure(r.alpha) +
      ", ** < 0.01, *** < 0.001). A12 (Vargha-Delaney) is the "
      "probability that a run of a scores higher than a run of b, ties counting half: 0.5 is no "
      "effect; 0.56, 0.64 and 0.71 (or 0.44, 0.36, 0.29) start small, medium and large effects. "
      "Missing runs are counted and left out, never taken as zero.");

  std::size_t index = 0;
  for (const MeasureComparison& m : r.measures) {
    ++index;
    char prefix[16];
    std::snprintf(prefix, sizeof prefix, "%02zu", index);
    const std::string name = std::string("box-") + prefix + "-" + slug(m.measure);
    const std::string svg = add_chart(box_plot_chart(m, r.alpha), name, m.measure);
    std::string inner = "<div class=\"plots\">\n" + svg + "<div>" + group_table(m, r.groups);
    if (!m.pairs.empty())
      inner += pair_header(false) + pair_rows(m, r.groups, r.alpha, false) + "</table>\n";
    inner += "</div></div>\n";
    inner += note(m.binary ? "Bars: share of runs that succeeded (successes / runs with a value)."
                           : "Box: first to third quartile, thick line: median, whiskers: "
                             "smallest and largest value; every run is a point (hollow: "
                             "censored, at its budget).");
    body += section(m.measure, inner);
  }

  index = 0;
  for (const auto& [family, goals] : goal_families(r)) {
    ++index;
    char prefix[16];
    std::snprintf(prefix, sizeof prefix, "%02zu", index);
    const std::string name = std::string("goals-") + prefix + "-" + slug(family);
    const std::string svg = add_chart(goal_chart(family, goals), name, family);
    std::string table =
        "<table><tr><th>goal</th><th>group</th><th>n</th><th>missing</th>"
        "<th>censored</th><th>median</th><th>q1</th><th>q3</th></tr>\n";
    for (const MeasureComparison* m : goals)
      for (const GroupSummary& g : m->groups)
        table += "<tr>" + td(esc(m->measure)) + td(group_cell(r.groups, g.group)) +
                 td(std::to_string(g.n), true) + td(std::to_string(g.n_missing), true) +
                 td(std::to_string(g.n_censored), true) + td(figure(g.median), true) +
                 td(figure(g.q1), true) + td(figure(g.q3), true) + "</tr>\n";
    table += "</table>\n";
    body += section(family + " per goal",
                    "<div class=\"plots\">\n" + svg + "<div>" + table + "</div></div>\n" +
                        note("A censored run did not reach the goal within its budget; it is "
                             "ranked at the budget (tied with the other censored runs) in the "
                             "tests, and a median at the budget means that at least half of "
                             "the runs did not reach the goal."));
  }

  index = 0;
  for (const CurveComparison& cv : r.curves) {
    ++index;
    char prefix[16];
    std::snprintf(prefix, sizeof prefix, "%02zu", index);
    const std::string name = std::string("curve-") + prefix + "-" + slug(cv.measure);
    const std::string svg = add_chart(curve_chart(cv, r.alpha), name, cv.measure);
    std::string marks;
    for (const CurveMark& mark : cv.marks)
      marks += "<tr>" + td(group_cell(r.groups, mark.group)) +
               td(std::to_string(cv.checkpoints[mark.checkpoint]), true) +
               td(p_text(mark.p), true) + td(p_text(mark.p_holm), true) +
               td(figure(mark.a12), true) + "</tr>\n";
    std::string inner = "<div class=\"plots\">\n" + svg + "</div>\n";
    std::size_t tested = 0;
    for (const CurveTest& t : cv.tests)
      if (t.group == cv.tests.front().group) ++tested;
    inner += note("Each group is tested against " + cv.reference + " at " + std::to_string(tested) +
                  " checkpoints spread over the run (Mann-Whitney U, Holm over the checkpoints "
                  "of that group); rings mark the checkpoints where the corrected p < " +
                  figure(r.alpha) +
                  ". A run's value at a checkpoint is its last recorded value "
                  "at or before it; a run that stopped earlier is missing there.");
    if (!marks.empty())
      inner +=
          "<table><tr><th>group</th><th>evaluations</th><th>p</th><th>p (Holm)</th>"
          "<th>A12</th></tr>\n" +
          marks + "</table>\n";
    body += section(cv.measure + " over evaluations", inner);
  }

  std::string all;
  for (const MeasureComparison& m : r.measures) all += pair_rows(m, r.groups, r.alpha, true);
  if (!all.empty()) body += section("All comparisons", pair_header(true) + all + "</table>\n");

  std::string list;
  for (std::size_t i = 0; i < listed.size(); ++i) list += (i ? ", " : "") + listed[i] + ".svg/.png";
  std::string html = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  html += "<title>Tessera comparison: " + esc(settings.title) + "</title>\n<style>\n" +
          std::string(kStyle) + "\n</style>\n</head>\n<body>\n";
  html += "<h1>Tessera comparison: " + esc(settings.title) + "</h1>\n" + body;
  html += note("Standalone files beside this page: " + list + ".");
  html += "</body>\n</html>\n";
  files.insert(files.begin(), {"index.html", html});
  return files;
}

}  // namespace tessera
