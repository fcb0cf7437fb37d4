// Report panels for linkage archives (problem `linkage`): the best elite drawn to scale with its
// coupler path, and the coupler paths of a few elites spread over the map, each with its
// dimensions. Other archives get no panels.
#pragma once

#include <string>
#include <vector>

#include "core/archive/snapshot.hpp"
#include "io/linkage_archive.hpp"
#include "report/html_report.hpp"

namespace tessera {

// One linkage to draw: its dimensions and its poses over a crank revolution.
struct LinkageDrawing {
  linkage::Dimensions dims;
  std::vector<linkage::Pose> poses;
  std::string label;  // one line under the drawing
};

// A complete <svg> element: ground pivots, the crank circle, the rocker pin's arc and the coupler
// path, with the links drawn at one crank angle (pose `shown`), to scale with axes in `units`.
std::string linkage_svg(const std::string& title, const LinkageDrawing& drawing,
                        const std::string& units, std::size_t shown);

// A complete <svg> element: several coupler paths side by side, each to its own scale, with
// the ground pivots and a label.
std::string coupler_paths_svg(const std::string& title, const std::vector<LinkageDrawing>& drawings,
                              const std::string& units);

// Panels for the report of a linkage archive (empty for other problems). `label` names the
// archive in messages; unreadable stored options throw InputError "LABEL: ...".
std::vector<ReportPanel> linkage_panels(const ArchiveSnapshot& snapshot, const std::string& label);

}  // namespace tessera
