// Report panel for arena archives (problem `arena`): the arena drawn to scale with its walls,
// start, goal and marks, every elite's final position, and the paths of the best controllers,
// re-run with the plugin's own header-only model (the plugin ABI carries no trajectories).
// Other archives get no panel.
#pragma once

#include <string>
#include <vector>

#include "../../plugins/arena/arena_layout.hpp"
#include "core/archive/snapshot.hpp"
#include "report/html_report.hpp"

namespace tessera {

struct ArenaScene {
  arena::Layout layout;
  std::vector<arena::Vec2> finals;              // final positions of every elite
  std::vector<std::vector<arena::Vec2>> paths;  // best first
  std::vector<std::string> path_labels;
};

// A complete <svg> element: the scene to scale, y upwards, about `side` pixels across.
std::string arena_svg(const std::string& title, const ArenaScene& scene, double side = 480);

// The panel for an arena archive (empty for other problems); `best` paths are drawn. Stored
// options or a layout file that cannot be read throw InputError "LABEL: ...".
std::vector<ReportPanel> arena_panels(const ArchiveSnapshot& snapshot, const std::string& label,
                                      std::size_t best = 5);

}  // namespace tessera
