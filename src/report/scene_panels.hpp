// Report panels for any problem that draws itself (plugin ABI version 2 tsr_scene / tsr_trace,
// or the process protocol's scene and trace messages): the scene to scale in the problem's
// units with axes, every elite's descriptor placed in it when the scene says how, and the traces
// of chosen elites overlaid; then each chosen elite alone; then the traces' time series.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "problems/figure.hpp"
#include "report/html_report.hpp"

namespace tessera {

struct EliteTrace {
  std::string label;  // e.g. "cell 4250, fitness -0.0004"
  Figure figure;
};

struct SceneDrawing {
  std::string problem;
  Figure scene;
  std::vector<double> elite_points;  // [x0, y0, x1, y1, ...]: descriptors placed in the scene
  std::vector<EliteTrace> traces;    // chosen elites, in the order chosen
  std::string trace_note;            // why no traces are drawn, when none are
};

// Every elite's descriptor placed in the scene by the scene's descriptor_map item (empty when
// the scene has none). `descriptors` is row-major [N * D].
std::vector<double> place_descriptors(const Figure& scene, const std::vector<double>& descriptors,
                                      std::size_t dimensions);

// The scene panel, then (two or more traces) one small drawing per elite, then one chart per
// time series of the traces.
std::vector<ReportPanel> scene_panels(const SceneDrawing& drawing);

}  // namespace tessera
