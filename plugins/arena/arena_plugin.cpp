// The `arena` problem as a plugin: a differential-drive robot with a neural controller (the
// genome) in an arena of line-segment walls read from a layout file (arena_layout.hpp).
// Descriptor: final position scaled to [0, 1]^2 (optionally more evenly spaced positions).
// Fitness: minus the final distance to the goal. Extras: goal_reached, goal_time, path_length,
// area_covered, one <mark>_time per mark of the layout, then trace_x_i / trace_y_i when asked.
// Extras whose name ends in "_time" hold the first time (s) a place was reached, -1 for never.
//
// Options ([problem.options]; a relative `layout` path is resolved against the run file):
//   layout (path; default: a built-in open 10 m x 10 m arena), radius, wheel_base, max_speed,
//   dt, duration, rays, fan, range, hidden, recurrent, weight_bound, raster, stop_at_goal,
//   samples, trace.
#include <tessera/plugin.h>

#include <cmath>
#include <cstdio>
#include <exception>
#include <memory>
#include <string>

#include "arena/arena_options.hpp"
#include "common/plugin_glue.hpp"

namespace glue = tessera::plugin_glue;
namespace arena = tessera::arena;
using arena::ArenaOptions;

namespace {

constexpr const char* kName = "arena";

}  // namespace

struct tsr_instance {
  ArenaOptions options;
  std::unique_ptr<arena::Simulator> sim;
  std::unique_ptr<arena::Simulator> tracer;  // records every step; made at the first trace
  glue::MetadataStore metadata;
};

TESSERA_GLUE_STANDARD_EXPORTS(kName)

extern "C" {

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  return glue::create_instance(error, error_size, [&] {
    auto instance = std::make_unique<tsr_instance>();
    instance->options = arena::read_options(options_toml);
    const auto& o = instance->options;
    instance->sim = std::make_unique<arena::Simulator>(arena::read_layout(o), o.robot);
    const arena::Layout& layout = instance->sim->layout();
    auto& m = instance->metadata;
    m.name = kName;
    char size[64];
    std::snprintf(size, sizeof size, "%g m x %g m", layout.width, layout.height);
    m.summary = "differential-drive robot with a neural controller in a " + std::string(size) +
                " arena: final position, fitness = -(final distance to the goal)";
    const std::size_t g = instance->sim->genome_size();
    m.genome_lower.assign(g, -o.weight_bound);
    m.genome_upper.assign(g, o.weight_bound);
    for (std::size_t s = 0; s < o.robot.samples; ++s) {
      const std::string suffix = o.robot.samples == 1 ? "" : "_" + std::to_string(s + 1);
      m.descriptor_names.push_back("x" + suffix);
      m.descriptor_names.push_back("y" + suffix);
    }
    m.descriptor_lower.assign(m.descriptor_names.size(), 0.0);
    m.descriptor_upper.assign(m.descriptor_names.size(), 1.0);
    m.fitness_lower = -layout.diagonal();
    m.fitness_upper = 0.0;
    m.extra_names = {"goal_reached", "goal_time", "path_length", "area_covered"};
    for (const auto& mark : layout.marks) m.extra_names.push_back(mark.name + "_time");
    for (std::size_t i = 0; i < o.robot.trace; ++i)
      m.extra_names.push_back("trace_x_" + std::to_string(i));
    for (std::size_t i = 0; i < o.robot.trace; ++i)
      m.extra_names.push_back("trace_y_" + std::to_string(i));
    m.finish();
    return instance.release();
  });
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* extras, char* error, size_t error_size) {
  try {
    arena::Simulator& sim = *instance->sim;
    const arena::Layout& layout = sim.layout();
    const std::size_t g = sim.genome_size();
    const std::size_t d = instance->metadata.descriptor_names.size();
    const std::size_t e = instance->metadata.extra_names.size();
    for (std::size_t k = 0; k < count; ++k) {
      const arena::Episode ep = sim.run({genomes + k * g, g});
      fitness[k] = -arena::norm(ep.final_pose.at - layout.goal);
      double* desc = descriptors + k * d;
      for (std::size_t s = 0; s < ep.samples.size(); ++s) {
        desc[2 * s] = ep.samples[s].x / layout.width;
        desc[2 * s + 1] = ep.samples[s].y / layout.height;
      }
      valid[k] = std::isfinite(fitness[k]) ? 1 : 0;
      if (extras == nullptr) continue;
      double* x = extras + k * e;
      *x++ = ep.goal_time >= 0.0 ? 1.0 : 0.0;
      *x++ = ep.goal_time;
      *x++ = ep.path_length;
      *x++ = ep.area_covered;
      for (double t : ep.mark_times) *x++ = t;
      for (const auto& p : ep.trace) *x++ = p.x;
      for (const auto& p : ep.trace) *x++ = p.y;
    }
    return TSR_OK;
  } catch (const std::exception& ex) {
    glue::write_error(error, error_size, ex.what());
  }
  return TSR_ERROR;
}

}  // extern "C"

// Figures: the arena to scale (walls, marks, goal zone, start) with every elite's final position
// from its descriptor; a trace is the robot's path at every step and its distance to the goal.
extern "C" {

TSR_EXPORT int tsr_scene(tsr_instance* instance, tsr_figure* figure, char* error,
                         size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    const arena::Layout& l = instance->sim->layout();
    f.note("units", "m");
    for (std::size_t i = 0; i < l.walls.size(); ++i) {
      const auto& w = l.walls[i];
      f.add(TSR_POLYLINE, TSR_STYLE_WALL, "wall " + std::to_string(i + 1), "x,y",
            {w.a.x, w.a.y, w.b.x, w.b.y});
    }
    for (const auto& m : l.marks)
      f.add(TSR_CIRCLES, TSR_STYLE_GUIDE, m.name, "x,y,r", {m.at.x, m.at.y, m.radius});
    f.add(TSR_CIRCLES, TSR_STYLE_ZONE, "goal", "x,y,r", {l.goal.x, l.goal.y, l.goal_radius});
    f.add(TSR_POINTS, TSR_STYLE_ANCHOR, "start", "x,y", {l.start.x, l.start.y});
    // The last (x, y) pair of the descriptor is the final position, scaled to [0, 1].
    const double d = static_cast<double>(instance->metadata.descriptor_names.size());
    f.add(TSR_DESCRIPTOR_MAP, TSR_STYLE_LINE, "final position", "ix,sx,ox,iy,sy,oy",
          {d - 2.0, l.width, 0.0, d - 1.0, l.height, 0.0});
  });
}

TSR_EXPORT int tsr_trace(tsr_instance* instance, const double* genome, tsr_figure* figure,
                         char* error, size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    if (!instance->tracer) {
      arena::RobotSettings settings = instance->options.robot;
      settings.trace = settings.steps();
      instance->tracer = std::make_unique<arena::Simulator>(instance->sim->layout(), settings);
    }
    arena::Simulator& sim = *instance->tracer;
    const arena::Layout& l = sim.layout();
    const arena::Episode ep = sim.run({genome, sim.genome_size()});
    const double dt = sim.settings().dt;
    // Row k is the pose after step k (k = 0: the start); after an early stop at the goal the
    // robot stays where it stopped.
    std::vector<double> path = {0.0, l.start.x, l.start.y};
    std::vector<double> distance = {0.0, arena::norm(l.start - l.goal)};
    for (std::size_t k = 0; k < ep.trace.size(); ++k) {
      const double t = static_cast<double>(k + 1) * dt;
      path.insert(path.end(), {t, ep.trace[k].x, ep.trace[k].y});
      distance.insert(distance.end(), {t, arena::norm(ep.trace[k] - l.goal)});
    }
    f.note("units", "m, s");
    f.add(TSR_POLYLINE, TSR_STYLE_LINE, "path", "t_s,x,y", path);
    f.add(TSR_SERIES, TSR_STYLE_LINE, "goal distance", "t_s,goal_distance_m", distance);
  });
}

}  // extern "C"
