// `tessera report`: a self-contained HTML page (inline SVG, inline CSS, no scripts, nothing
// fetched) about one archive — summary table, fitness map, progress curves, and the trade-off
// front when objectives are given — plus each plot as a standalone SVG file and the map as PNG.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "core/select/front.hpp"
#include "core/select/query.hpp"
#include "core/archive/snapshot.hpp"

namespace tessera {

// An extra section of the page, e.g. a drawing specific to one problem (a linkage's coupler path,
// an arena): `svg` is a complete <svg> element; it is also written as a standalone file.
struct ReportPanel {
  std::string title;
  std::string svg;
  std::string caption;  // plain text under the drawing (optional)
};

struct ReportSettings {
  std::string archive_label;           // how the page names the archive (e.g. its path)
  std::size_t axis_x = 0, axis_y = 1;  // descriptor indices of the map's axes
  bool axes_chosen = false;            // the user picked the axes (--axes)
  std::vector<Objective> objectives;   // front shown when two or more
  std::vector<std::string> objective_names;
  EliteFilter front_filter;       // constraints on the front's candidates
  std::string front_filter_text;  // their description, for the page
  std::vector<ReportPanel> extra_panels;
  std::size_t png_side = 512;  // about this many pixels across the PNG map
};

struct ReportFile {
  std::string name;   // file name inside the report folder
  std::string bytes;  // content
};

// Everything in memory: nothing is written until all of it is ready.
std::vector<ReportFile> build_report(const ArchiveSnapshot& snapshot,
                                     const ReportSettings& settings);

// Creates `dir` if needed and writes each file whole under a temporary name, then renames it.
// tessera::InputError "DIR: cannot write the report: ..." when the file system refuses.
void write_report_files(const std::string& dir, const std::vector<ReportFile>& files);

}  // namespace tessera
