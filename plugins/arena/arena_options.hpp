// Options of the arena problem ([problem.options] of a run file), read the same way by the plugin
// and by the report, which re-runs elites to draw their paths. Header-only: toml++ and the
// plugin glue only.
//
//   layout        path of the arena layout file (default: a built-in open 10 m x 10 m arena)
//   radius        robot radius, m (0.25)            wheel_base  m (2 x radius)
//   max_speed     per wheel, m/s (1)                dt          fixed step, s (0.2)
//   duration      s (40)                            rays        rangefinders (5)
//   fan           degrees covered by the rays (180) range       m beyond the rim (3)
//   hidden        hidden units (5)                  recurrent   Elman context units (false)
//   weight_bound  genome bounds +-w (3)             raster      area cell side, m (0.2)
//   stop_at_goal  end the episode at the goal (false)
//   samples       positions in the descriptor (1)   trace       positions as extras (0)
#pragma once

#include <cmath>
#include <string>
#include <string_view>

#include "../common/plugin_glue.hpp"
#include "arena_layout.hpp"
#include "arena_sim.hpp"

namespace tessera::arena {

namespace glue = tessera::plugin_glue;

// Used when no layout is given, so that the problem can be listed and tried without files.
inline constexpr const char* kBuiltInLayout =
    "arena 10 10\n"
    "start 2 2 45\n"
    "goal 8 8 0.5\n";

inline double number_option(const toml::table& options, std::string_view key, double fallback,
                            double min, double max) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return fallback;
  const auto value = node->value<double>();
  if (!value || !std::isfinite(*value))
    throw glue::OptionError("option '" + std::string(key) + "' must be a number");
  if (*value < min || *value > max)
    throw glue::OptionError("option '" + std::string(key) + "' = " + std::to_string(*value) +
                            " is out of range [" + std::to_string(min) + ", " +
                            std::to_string(max) + "]");
  return *value;
}

inline bool bool_option(const toml::table& options, std::string_view key, bool fallback) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return fallback;
  const auto value = node->value_exact<bool>();
  if (!value) throw glue::OptionError("option '" + std::string(key) + "' must be true or false");
  return *value;
}

struct ArenaOptions {
  std::string layout_path;  // empty: built in
  RobotSettings robot;
  double weight_bound = 3.0;
};

inline ArenaOptions read_options(const char* text) {
  const toml::table table = glue::parse_options(text);
  glue::check_keys(table, {"layout", "radius", "wheel_base", "max_speed", "dt", "duration", "rays",
                           "fan", "range", "hidden", "recurrent", "weight_bound", "raster",
                           "stop_at_goal", "samples", "trace"});
  ArenaOptions o;
  if (const toml::node* node = table.get("layout")) {
    const auto path = node->value_exact<std::string>();
    if (!path || path->empty()) throw glue::OptionError("option 'layout' must be a file path");
    o.layout_path = *path;
  }
  auto& r = o.robot;
  r.radius = number_option(table, "radius", 0.25, 1e-3, 1e3);
  r.wheel_base = number_option(table, "wheel_base", 2.0 * r.radius, 1e-3, 1e3);
  r.max_speed = number_option(table, "max_speed", 1.0, 1e-6, 1e6);
  r.dt = number_option(table, "dt", 0.2, 1e-4, 1e3);
  r.duration = number_option(table, "duration", 40.0, 1e-4, 1e6);
  if (r.steps() < 1 || r.steps() > 10'000'000)
    throw glue::OptionError("duration / dt must give between 1 and 10^7 steps");
  r.rays = static_cast<std::size_t>(glue::integer_option(table, "rays", 5, 0, 64));
  r.fan = number_option(table, "fan", 180.0, 0.0, 360.0);
  r.range = number_option(table, "range", 3.0, 1e-3, 1e6);
  r.hidden = static_cast<std::size_t>(glue::integer_option(table, "hidden", 5, 0, 256));
  r.recurrent = bool_option(table, "recurrent", false);
  if (r.recurrent && r.hidden == 0)
    throw glue::OptionError("option 'recurrent' needs hidden units (hidden >= 1)");
  r.raster = number_option(table, "raster", 0.2, 1e-3, 1e6);
  r.stop_at_goal = bool_option(table, "stop_at_goal", false);
  r.samples = static_cast<std::size_t>(glue::integer_option(table, "samples", 1, 1, 64));
  r.trace = static_cast<std::size_t>(glue::integer_option(table, "trace", 0, 0, 100000));
  if (r.samples > r.steps() || r.trace > r.steps())
    throw glue::OptionError("samples and trace must not exceed the number of steps");
  o.weight_bound = number_option(table, "weight_bound", 3.0, 1e-6, 1e6);
  return o;
}

inline Layout read_layout(const ArenaOptions& o) {
  Layout layout = o.layout_path.empty() ? parse_layout(kBuiltInLayout, "built-in layout")
                                        : load_layout(o.layout_path);
  const std::string source = o.layout_path.empty() ? "built-in layout" : o.layout_path;
  for (const auto& wall : layout.walls)
    if (point_segment_distance(layout.start, wall) < o.robot.radius)
      throw LayoutError(source + ": the robot (radius " + std::to_string(o.robot.radius) +
                        ") overlaps a wall at its start position");
  // The raster must stay a sensible size.
  const double cells =
      std::ceil(layout.width / o.robot.raster) * std::ceil(layout.height / o.robot.raster);
  if (cells > 1e8)
    throw glue::OptionError("option 'raster' is too fine for this arena (over 10^8 cells)");
  return layout;
}

}  // namespace tessera::arena
