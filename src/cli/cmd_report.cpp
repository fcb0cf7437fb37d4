// `tessera report ARCHIVE.h5 --out DIR [--axes NAME1,NAME2] [--objective NAME:min|max]...
// [--within NAME=LO:HI]...`: writes DIR/index.html (self-contained) and the plots as SVG/PNG.
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/selection_args.hpp"
#include "core/base/errors.hpp"
#include "io/archive_file.hpp"
#include "report/arena_panels.hpp"
#include "report/html_report.hpp"
#include "report/linkage_panels.hpp"

namespace tessera::cli {
namespace {

struct ReportOptions {
  std::string archive;
  std::string out_dir;
  std::string axes;
  std::vector<std::string> objectives;
  std::vector<std::string> within;
};

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

  settings.extra_panels = linkage_panels(s, o.archive);  // empty unless a linkage archive
  for (auto& panel : arena_panels(s, o.archive))         // empty unless an arena archive
    settings.extra_panels.push_back(std::move(panel));
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
  cmd->callback([o] { throw CLI::RuntimeError(run_report(*o)); });
}

}  // namespace tessera::cli
