// `tessera report ARCHIVE.h5 --out DIR [--axes NAME1,NAME2] [--objective NAME:min|max]...
// [--within NAME=LO:HI]...`: writes DIR/index.html (self-contained) and the plots as SVG/PNG.
#include <algorithm>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/archive_problem.hpp"
#include "cli/commands.hpp"
#include "cli/selection_args.hpp"
#include "core/base/errors.hpp"
#include "core/select/spread.hpp"
#include "io/archive_file.hpp"
#include "report/html_report.hpp"
#include "report/scene_panels.hpp"
#include "report/svg_chart.hpp"

namespace tessera::cli {
namespace {

struct ReportOptions {
  std::string archive;
  std::string out_dir;
  std::string axes;
  std::vector<std::string> objectives;
  std::vector<std::string> within;
  std::size_t traces = 5;
  std::string cells;
};

// Rows of the elites whose traces are drawn: those in --cells, in the order given, else `count`
// spread over the map (the fittest, then farthest-point choices: core/select/spread.hpp).
std::vector<std::size_t> chosen_elites(const ReportOptions& o, const ArchiveSnapshot& s) {
  std::vector<std::size_t> rows;
  if (!o.cells.empty()) {
    for (double value : parse_number_list(o.cells, "--cells")) {
      const auto cell = static_cast<std::int64_t>(value);
      std::size_t i = 0;
      while (i < s.elite_count() && s.cell[i] != cell) ++i;
      if (value != static_cast<double>(cell) || i == s.elite_count())
        throw InputError(o.archive + ": --cells: cell " + tick_label(value) + " holds no elite");
      rows.push_back(i);
    }
    return rows;
  }
  return spread_elites(s, o.traces);
}

// The scene panels when the archive's problem draws itself; none (with one line on stderr
// saying why, when it is a fault) otherwise: the rest of the report never depends on it.
std::vector<ReportPanel> problem_panels(const ReportOptions& o, const ArchiveSnapshot& s) {
  const auto rows = chosen_elites(o, s);
  std::shared_ptr<const Problem> problem;
  SceneDrawing drawing;
  drawing.problem = s.problem;
  try {
    problem = open_archive_problem(s, o.archive);
    auto scene = problem->scene();
    if (!scene) return {};
    drawing.scene = std::move(*scene);
  } catch (const std::exception& e) {
    std::cerr << "report: no scene drawn: " << e.what() << "\n";
    return {};
  }
  drawing.elite_points = place_descriptors(drawing.scene, s.descriptor, s.descriptor_size());
  const std::size_t g = s.genome_size();
  try {
    for (std::size_t row : rows) {
      auto trace = problem->trace({s.genome.begin() + row * g, s.genome.begin() + (row + 1) * g});
      if (!trace) {
        drawing.trace_note = "The problem gives no traces.";
        break;
      }
      drawing.traces.push_back(
          {"cell " + std::to_string(s.cell[row]) + ", fitness " + tick_label(s.fitness[row]),
           std::move(*trace)});
    }
  } catch (const std::exception& e) {
    std::cerr << "report: traces not drawn: " << e.what() << "\n";
    drawing.traces.clear();
    drawing.trace_note = "Traces could not be drawn: see the report command's messages.";
  }
  return scene_panels(drawing);
}

int run_report(const ReportOptions& o) {
  const ArchiveSnapshot s = read_archive_file(o.archive);
  ReportSettings settings;
  settings.archive_label = o.archive;
  if (!o.axes.empty()) {
    if (s.descriptor_size() < 2)
      throw InputError(o.archive + ": --axes needs two descriptors; the archive has one");
    const auto axes = parse_axes(o.axes, s, o.archive);
    settings.axis_x = axes[0];
    settings.axis_y = axes[1];
    settings.axes_chosen = true;
  }
  if (o.objectives.size() == 1)
    throw InputError("report: a front needs two or more --objective NAME:min|max");
  if (o.objectives.empty() && !o.within.empty())
    throw InputError("report: --within constrains the front; give --objective too");
  for (const auto& n : parse_objectives(o.objectives, s, o.archive)) {
    settings.objectives.push_back(n.objective);
    settings.objective_names.push_back(n.name);
  }
  settings.front_filter.within = parse_within(o.within, s, o.archive);
  settings.front_filter_text = describe_filter(settings.front_filter, s);

  settings.extra_panels = problem_panels(o, s);
  const auto files = build_report(s, settings);
  write_report_files(o.out_dir, files);
  std::cout << "report: " << o.out_dir << "/index.html (" << files.size() << " files)\n";
  return 0;
}

}  // namespace

void register_report(CLI::App& app) {
  auto o = std::make_shared<ReportOptions>();
  auto* cmd = app.add_subcommand(
      "report",
      "Write a self-contained HTML report about an archive to DIR/index.html: summary, a map of\n"
      "the elites' fitness over the descriptors, coverage / QD-score / max fitness against\n"
      "evaluations, and the trade-off front when --objective is given. Each plot is also\n"
      "written as an SVG file, and the map as heatmap.png.");
  cmd->add_option("ARCHIVE", o->archive, "archive file (.h5) written by tessera")->required();
  cmd->add_option("--out,-o", o->out_dir, "output folder (created if missing)")->required();
  cmd->add_option("--axes", o->axes,
                  "two descriptors to map, NAME1,NAME2 (more than two descriptors: elites are "
                  "projected; default the first two)");
  cmd->add_option("--objective", o->objectives,
                  "NAME:min or NAME:max (NAME = fitness or a descriptor name); two or more add "
                  "the trade-off front");
  cmd->add_option("--within", o->within,
                  "constrain the front's elites: LO <= NAME <= HI; NAME=LO:HI, repeatable");
  cmd->add_option("--traces", o->traces,
                  "draw the problem's scene with the traces of N elites spread over the map: the "
                  "fittest, then each time the one farthest from those drawn (default 5; "
                  "0: the scene alone)")
      ->check(CLI::Range(std::size_t{0}, std::size_t{24}));
  cmd->add_option("--cells", o->cells, "C1,C2,...: draw the traces of the elites in these cells")
      ->excludes("--traces");
  cmd->callback([o] { throw CLI::RuntimeError(run_report(*o)); });
}

}  // namespace tessera::cli
