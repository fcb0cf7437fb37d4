#include "report/arena_panels.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cstdio>
#include <numeric>
#include <sstream>

#include "../../plugins/arena/arena_options.hpp"
#include "core/base/errors.hpp"
#include "report/svg_chart.hpp"

namespace tessera {
namespace {

std::string num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  return buf;
}

// Distinct colours for the best paths (best first), readable on white.
const char* const kPathColours[] = {"#d62728", "#1f77b4", "#2ca02c", "#9467bd",
                                    "#ff7f0e", "#8c564b", "#e377c2", "#17becf"};

}  // namespace

std::string arena_svg(const std::string& title, const ArenaScene& scene, double side) {
  const arena::Layout& l = scene.layout;
  const double scale = side / std::max(l.width, l.height);
  const double left = 20, top = 36;
  const double width = l.width * scale, height = l.height * scale;
  const auto px = [&](double x) { return num(left + x * scale); };
  const auto py = [&](double y) { return num(top + (l.height - y) * scale); };
  std::string b;
  for (const auto& w : l.walls)
    b += "<line x1=\"" + px(w.a.x) + "\" y1=\"" + py(w.a.y) + "\" x2=\"" + px(w.b.x) + "\" y2=\"" +
         py(w.b.y) + "\" stroke=\"#222\" stroke-width=\"2.5\" stroke-linecap=\"round\"/>\n";
  for (const auto& m : l.marks)
    b += "<circle cx=\"" + px(m.at.x) + "\" cy=\"" + py(m.at.y) + "\" r=\"" +
         num(m.radius * scale) +
         "\" fill=\"none\" stroke=\"#888\" stroke-dasharray=\"4 3\"/>\n<text x=\"" + px(m.at.x) +
         "\" y=\"" + py(m.at.y) + "\" font-size=\"10\" fill=\"#666\" text-anchor=\"middle\">" +
         xml_escape(m.name) + "</text>\n";
  b += "<circle cx=\"" + px(l.goal.x) + "\" cy=\"" + py(l.goal.y) + "\" r=\"" +
       num(l.goal_radius * scale) +
       "\" fill=\"#2ca02c\" fill-opacity=\"0.25\" stroke=\"#2ca02c\"/>\n";
  for (const auto& p : scene.finals)
    b += "<circle cx=\"" + px(p.x) + "\" cy=\"" + py(p.y) +
         "\" r=\"2\" fill=\"#555\" fill-opacity=\"0.45\"/>\n";
  for (std::size_t i = scene.paths.size(); i-- > 0;) {
    const auto& path = scene.paths[i];
    if (path.empty()) continue;
    const char* colour = kPathColours[i % std::size(kPathColours)];
    std::string points;
    for (const auto& p : path) points += px(p.x) + "," + py(p.y) + " ";
    b += "<polyline points=\"" + points + "\" fill=\"none\" stroke=\"" + colour +
         "\" stroke-width=\"1.8\"/>\n<circle cx=\"" + px(path.back().x) + "\" cy=\"" +
         py(path.back().y) + "\" r=\"4\" fill=\"" + colour + "\"/>\n";
  }
  b += "<circle cx=\"" + px(l.start.x) + "\" cy=\"" + py(l.start.y) +
       "\" r=\"5\" fill=\"#fff\" stroke=\"#000\" stroke-width=\"2\"/>\n";
  // Legend under the arena.
  double y = top + height + 18;
  b += "<text x=\"" + num(left) + "\" y=\"" + num(y) +
       "\" font-size=\"11\">open circle: start; green: goal; grey dots: final positions of the "
       "elites</text>\n";
  for (std::size_t i = 0; i < scene.paths.size() && i < scene.path_labels.size(); ++i) {
    y += 15;
    b += "<rect x=\"" + num(left) + "\" y=\"" + num(y - 9) +
         "\" width=\"14\" height=\"4\" fill=\"" + kPathColours[i % std::size(kPathColours)] +
         "\"/><text x=\"" + num(left + 20) + "\" y=\"" + num(y) + "\" font-size=\"11\">" +
         xml_escape(scene.path_labels[i]) + "</text>\n";
  }
  return svg_element(width + 2 * left, y + 14, title, b);
}

std::vector<ReportPanel> arena_panels(const ArchiveSnapshot& s, const std::string& label,
                                      std::size_t best) {
  if (s.problem != "arena" || s.elite_count() == 0 || s.descriptor_size() < 2) return {};
  std::string options_text;
  try {
    const toml::table config = toml::parse(s.config);
    if (const auto* options = config["problem"]["options"].as_table()) {
      std::ostringstream text;
      text << *options;
      options_text = text.str();
    }
  } catch (const toml::parse_error& e) {
    throw InputError(label +
                     ": the stored run file is not valid TOML: " + std::string(e.description()));
  }
  ArenaScene scene;
  arena::ArenaOptions options;
  try {
    options = arena::read_options(options_text.c_str());
    scene.layout = arena::read_layout(options);
  } catch (const std::exception& e) {
    throw InputError(label + ": cannot draw the arena: " + e.what());
  }
  // Every step of the best paths (at most 2,000 points each).
  options.robot.trace = std::min<std::size_t>(options.robot.steps(), 2000);
  arena::Simulator sim(scene.layout, options.robot);
  if (sim.genome_size() != s.genome_size())
    throw InputError(label + ": the stored arena options give " +
                     std::to_string(sim.genome_size()) + " weights, the elites have " +
                     std::to_string(s.genome_size()));

  // Final positions: the last (x, y) pair of each descriptor, scaled back to metres.
  const std::size_t d = s.descriptor_size();
  for (std::size_t i = 0; i < s.elite_count(); ++i)
    scene.finals.push_back({s.descriptor[i * d + d - 2] * scene.layout.width,
                            s.descriptor[i * d + d - 1] * scene.layout.height});
  std::vector<std::size_t> order(s.elite_count());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return s.fitness[a] > s.fitness[b]; });
  order.resize(std::min(best, order.size()));
  const std::size_t g = s.genome_size();
  for (std::size_t row : order) {
    const arena::Episode ep = sim.run({s.genome.data() + row * g, g});
    std::vector<arena::Vec2> path = {scene.layout.start};
    path.insert(path.end(), ep.trace.begin(), ep.trace.end());
    scene.paths.push_back(std::move(path));
    scene.path_labels.push_back("elite " + std::to_string(row) + ": fitness " +
                                tick_label(s.fitness[row]) + ", path " +
                                tick_label(ep.path_length) + " m, area covered " +
                                tick_label(100.0 * ep.area_covered) + "%");
  }
  return {
      {"Arena: final positions and the best paths",
       arena_svg("Arena, final positions and the " + std::to_string(order.size()) + " best paths",
                 scene),
       "The arena to scale (walls black), the final position of every elite, and the paths "
       "of the fittest elites re-run with the stored options. Fitness is minus the final "
       "distance to the goal."}};
}

}  // namespace tessera
