#include "report/html_report.hpp"

#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <filesystem>
#include <fstream>

#include "core/base/errors.hpp"
#include "io/archive_summary.hpp"
#include "report/heatmap.hpp"
#include "report/png_image.hpp"
#include "report/svg_chart.hpp"

namespace tessera {
namespace {

std::string thousands(std::uint64_t v) {
  std::string digits = std::to_string(v), out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out += ',';
    out += digits[i];
  }
  return out;
}

std::string figure(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

std::string vector_text(const std::vector<double>& v) {
  std::string out = "(";
  for (std::size_t i = 0; i < v.size(); ++i) out += (i ? ", " : "") + figure(v[i]);
  return out + ")";
}

std::string slug(const std::string& title) {
  std::string out;
  for (unsigned char c : title) {
    if (std::isalnum(c))
      out += static_cast<char>(std::tolower(c));
    else if (!out.empty() && out.back() != '-')
      out += '-';
  }
  while (!out.empty() && out.back() == '-') out.pop_back();
  return out.substr(0, 40);
}

const char* kStyle =
    R"(body{font-family:sans-serif;max-width:1240px;margin:1.5em auto;padding:0 1em;color:#222}
h1{font-size:1.5em;margin-bottom:.2em}h2{font-size:1.2em;border-bottom:1px solid #ccc;padding-bottom:.2em;margin-top:1.6em}
.sub{color:#555;margin-top:0}.plots{display:flex;flex-wrap:wrap;gap:12px}.note{color:#444;font-size:.92em;max-width:900px}
table{border-collapse:collapse;font-size:.92em}td,th{border:1px solid #ddd;padding:3px 8px;text-align:left;vertical-align:top}
th{background:#f4f4f4}td.n{text-align:right;font-variant-numeric:tabular-nums})";

struct Row {
  std::string key, value;
};

std::string summary_table(const ArchiveSummary& s, const std::string& extra_key,
                          const std::string& extra_value) {
  std::vector<Row> rows;
  rows.push_back({"problem", s.problem});
  rows.push_back({"written by", "tessera " + s.tool_version});
  rows.push_back({"seed", std::to_string(s.seed)});
  std::string space =
      s.space_kind + ", " + thousands(static_cast<std::uint64_t>(s.cells)) + " cells";
  if (!s.resolution.empty()) {
    std::string res;
    for (std::size_t i = 0; i < s.resolution.size(); ++i)
      res += (i ? " × " : "") + std::to_string(s.resolution[i]);
    space += " (" + res + ")";
  }
  rows.push_back({"space", space});
  std::string descriptors;
  for (std::size_t i = 0; i < s.descriptor_names.size(); ++i)
    descriptors += (i ? "; " : "") + s.descriptor_names[i] + " in [" +
                   figure(s.descriptor_bounds.lower[i]) + ", " +
                   figure(s.descriptor_bounds.upper[i]) + "]";
  rows.push_back({"descriptors", descriptors});
  rows.push_back({"genome", std::to_string(s.genome_size) + " parameters"});
  rows.push_back({"evaluations", thousands(s.evaluations)});
  rows.push_back({"elites", thousands(s.elites)});
  char pct[32];
  std::snprintf(pct, sizeof pct, "%.2f%%", 100.0 * s.coverage);
  rows.push_back({"coverage", pct});
  rows.push_back(
      {"QD-score", figure(s.qd_score) + " (fitness floor " + figure(s.fitness_floor) + ")"});
  rows.push_back({"max fitness", s.max_fitness ? figure(*s.max_fitness) : "- (no elites)"});
  if (s.best)
    rows.push_back({"best elite", "cell " + std::to_string(s.best->cell) + ", fitness " +
                                      figure(s.best->fitness) + ", descriptor " +
                                      vector_text(s.best->descriptor) + ", found at evaluation " +
                                      thousands(s.best->birth)});
  if (s.invalid) rows.push_back({"invalid evaluations", thousands(*s.invalid)});
  if (s.out_of_bounds) rows.push_back({"out of bounds", thousands(*s.out_of_bounds)});
  rows.push_back({"history rows", thousands(s.history_rows)});
  if (!extra_key.empty()) rows.push_back({extra_key, extra_value});
  std::string out = "<table>\n";
  for (const auto& r : rows)
    out += "<tr><th>" + xml_escape(r.key) + "</th><td>" + xml_escape(r.value) + "</td></tr>\n";
  return out + "</table>\n";
}

std::string section(const std::string& title, const std::string& inner) {
  return "<section>\n<h2>" + xml_escape(title) + "</h2>\n" + inner + "</section>\n";
}

std::string note(const std::string& text) {
  return "<p class=\"note\">" + xml_escape(text) + "</p>\n";
}

}  // namespace

std::vector<ReportFile> build_report(const ArchiveSnapshot& s, const ReportSettings& o) {
  std::vector<ReportFile> files;
  const ArchiveSummary summary = summarize_archive(s, o.archive_label);

  // Map.
  const Heatmap map = make_heatmap(s, o.axis_x, o.axis_y);
  std::string map_title =
      "Fitness map: " + map.x_name + (map.y_name.empty() ? "" : " × " + map.y_name);
  const std::string map_svg = heatmap_svg(map, map_title);
  const auto png = encode_png(heatmap_image(map, o.png_side));
  files.push_back({"heatmap.svg", svg_file(map_svg)});
  files.push_back({"heatmap.png", std::string(png.begin(), png.end())});
  std::string map_note = map.note;
  if (s.descriptor_size() > 2 && !o.axes_chosen)
    map_note += " Axes: the first two descriptors; choose others with --axes NAME1,NAME2.";
  map_note +=
      " Colours: cividis (Nuñez, Anderton & Renslow, PLOS ONE 2018), from the lowest "
      "to the highest fitness shown.";

  // Progress curves.
  std::vector<double> evals, coverage, qd, best;
  for (const auto& h : s.history) {
    evals.push_back(static_cast<double>(h.evaluations));
    coverage.push_back(h.coverage);
    qd.push_back(h.qd_score);
    best.push_back(h.max_fitness);
  }
  const std::string coverage_svg = line_chart_svg(
      "Coverage", "evaluations", "coverage (fraction of cells)", evals, coverage, true);
  // The QD-score is a sum of fitness above the lowest possible: never below 0.
  const std::string qd_svg = line_chart_svg("QD-score", "evaluations", "QD-score", evals, qd, true);
  const std::string max_svg =
      line_chart_svg("Max fitness", "evaluations", "max fitness", evals, best);
  files.push_back({"coverage.svg", svg_file(coverage_svg)});
  files.push_back({"qd-score.svg", svg_file(qd_svg)});
  files.push_back({"max-fitness.svg", svg_file(max_svg)});

  // Front.
  std::string front_section, front_key, front_value;
  if (o.objectives.size() >= 2) {
    const auto rows = filter_elites(s, o.front_filter);
    const auto front = elite_front(s, rows, o.objectives);
    const auto axis_name = [&](std::size_t j) {
      return o.objective_names[j] + (o.objectives[j].goal == Goal::maximize ? " (max)" : " (min)");
    };
    std::vector<double> ax, ay, fx, fy;
    for (std::size_t r : rows) {
      ax.push_back(objective_value(s, r, o.objectives[0]));
      ay.push_back(objective_value(s, r, o.objectives[1]));
    }
    for (std::size_t r : front) {
      fx.push_back(objective_value(s, r, o.objectives[0]));
      fy.push_back(objective_value(s, r, o.objectives[1]));
    }
    const std::string title =
        "Trade-off front: " + thousands(front.size()) + " of " + thousands(rows.size()) + " elites";
    std::string inner;
    if (rows.empty()) {
      inner = note("No elite satisfies the constraints (" + o.front_filter_text + ").");
    } else {
      const std::string svg = front_chart_svg(title, axis_name(0), axis_name(1), ax, ay, fx, fy,
                                              o.objectives.size() == 2);
      files.push_back({"front.svg", svg_file(svg)});
      inner = svg;
      std::string objectives_text;
      for (std::size_t j = 0; j < o.objectives.size(); ++j)
        objectives_text += (j ? ", " : "") + axis_name(j);
      inner +=
          note("Objectives: " + objectives_text + ". Constraints: " + o.front_filter_text + "." +
               (o.objectives.size() > 2 ? " The plot shows the first two objectives." : ""));
      inner += "<table><tr><th>rank</th><th>cell</th>";
      for (std::size_t j = 0; j < o.objectives.size(); ++j)
        inner += "<th>" + xml_escape(axis_name(j)) + "</th>";
      inner += "</tr>\n";
      const std::size_t shown = std::min<std::size_t>(front.size(), 50);
      for (std::size_t i = 0; i < shown; ++i) {
        inner += "<tr><td class=\"n\">" + std::to_string(i + 1) + "</td><td class=\"n\">" +
                 std::to_string(s.cell[front[i]]) + "</td>";
        for (const auto& objective : o.objectives)
          inner += "<td class=\"n\">" + figure(objective_value(s, front[i], objective)) + "</td>";
        inner += "</tr>\n";
      }
      inner += "</table>\n";
      if (shown < front.size())
        inner += note("First " + std::to_string(shown) + " rows; `tessera front` lists all.");
    }
    front_section = section("Trade-off front", inner);
    front_key = "front";
    front_value = thousands(front.size()) + " non-dominated of " + thousands(rows.size()) +
                  " elites within the constraints";
  }

  // Page.
  std::string html = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  html += "<title>Tessera report: " + xml_escape(s.problem) + "</title>\n<style>\n" +
          std::string(kStyle) + "\n</style>\n</head>\n<body>\n";
  html += "<h1>Tessera report: " + xml_escape(s.problem) + "</h1>\n<p class=\"sub\">" +
          xml_escape(o.archive_label) + " · " + thousands(s.evaluations) + " evaluations · " +
          thousands(s.elite_count()) + " elites</p>\n";
  html += section("Summary", summary_table(summary, front_key, front_value));
  html += section("Map of the elites",
                  "<div class=\"plots\">\n" + map_svg + "</div>\n" + note(map_note));
  html +=
      section("Progress", "<div class=\"plots\">\n" + coverage_svg + qd_svg + max_svg + "</div>\n" +
                              note("Recorded after each batch: the fraction of cells holding "
                                   "an elite, the QD-score (sum over elites of fitness minus "
                                   "the offset; Pugh, Soros & Stanley 2016) and the best "
                                   "fitness so far."));
  html += front_section;
  for (std::size_t i = 0; i < o.extra_panels.size(); ++i) {
    const auto& p = o.extra_panels[i];
    const std::string name = "panel-" + std::to_string(i + 1) +
                             (slug(p.title).empty() ? "" : "-" + slug(p.title)) + ".svg";
    files.push_back({name, svg_file(p.svg)});
    html += section(p.title, "<div class=\"plots\">\n" + p.svg + "</div>\n" +
                                 (p.caption.empty() ? "" : note(p.caption)));
  }
  html +=
      "<p class=\"note\">Standalone files beside this page: heatmap.svg, heatmap.png, "
      "coverage.svg, qd-score.svg, max-fitness.svg" +
      std::string(front_section.empty() ? "" : ", front.svg") + ".</p>\n</body>\n</html>\n";
  files.insert(files.begin(), {"index.html", html});
  return files;
}

void write_report_files(const std::string& dir, const std::vector<ReportFile>& files) {
  namespace fs = std::filesystem;
  std::error_code ec;
  fs::create_directories(dir, ec);
  if (ec) throw InputError(dir + ": cannot write the report: " + ec.message());
  for (const auto& f : files) {
    const fs::path target = fs::path(dir) / f.name;
    const fs::path temp = fs::path(dir) / ("." + f.name + ".tmp-" + std::to_string(::getpid()));
    {
      std::ofstream out(temp, std::ios::binary | std::ios::trunc);
      out.write(f.bytes.data(), static_cast<std::streamsize>(f.bytes.size()));
      out.close();
      if (!out) {
        fs::remove(temp, ec);
        throw InputError(dir + ": cannot write the report: writing " + f.name + " failed");
      }
    }
    fs::rename(temp, target, ec);
    if (ec) {
      const std::string why = ec.message();
      fs::remove(temp, ec);
      throw InputError(dir + ": cannot write the report: " + f.name + ": " + why);
    }
  }
}

}  // namespace tessera
