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
#include <exception>
#include <memory>
#include <string>

#include "arena/arena_layout.hpp"
#include "arena/arena_sim.hpp"
#include "common/plugin_glue.hpp"

namespace glue = tessera::plugin_glue;
namespace arena = tessera::arena;

namespace {

constexpr const char* kName = "arena";

// Used when no layout is given, so that the problem can be listed and tried without files.
constexpr const char* kBuiltInLayout =
    "arena 10 10\n"
    "start 2 2 45\n"
    "goal 8 8 0.5\n";

double number_option(const toml::table& options, std::string_view key, double fallback,
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

bool bool_option(const toml::table& options, std::string_view key, bool fallback) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return fallback;
  const auto value = node->value_exact<bool>();
  if (!value) throw glue::OptionError("option '" + std::string(key) + "' must be true or false");
  return *value;
}

struct ArenaOptions {
  std::string layout_path;  // empty: built in
  arena::RobotSettings robot;
  double weight_bound = 3.0;
};

ArenaOptions read_options(const char* text) {
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
  r.stop_at_goal = bool_option(table, "stop_at_goal", true);
  r.samples = static_cast<std::size_t>(glue::integer_option(table, "samples", 1, 1, 64));
  r.trace = static_cast<std::size_t>(glue::integer_option(table, "trace", 0, 0, 100000));
  if (r.samples > r.steps() || r.trace > r.steps())
    throw glue::OptionError("samples and trace must not exceed the number of steps");
  o.weight_bound = number_option(table, "weight_bound", 3.0, 1e-6, 1e6);
  return o;
}

arena::Layout read_layout(const ArenaOptions& o) {
  arena::Layout layout = o.layout_path.empty()
                             ? arena::parse_layout(kBuiltInLayout, "built-in layout")
                             : arena::load_layout(o.layout_path);
  const std::string source = o.layout_path.empty() ? "built-in layout" : o.layout_path;
  for (const auto& wall : layout.walls)
    if (arena::point_segment_distance(layout.start, wall) < o.robot.radius)
      throw arena::LayoutError(source + ": the robot (radius " + std::to_string(o.robot.radius) +
                               ") overlaps a wall at its start position");
  // The raster must stay a sensible size.
  const double cells = std::ceil(layout.width / o.robot.raster) * std::ceil(layout.height / o.robot.raster);
  if (cells > 1e8) throw glue::OptionError("option 'raster' is too fine for this arena (over 10^8 cells)");
  return layout;
}

}  // namespace

struct tsr_instance {
  ArenaOptions options;
  std::unique_ptr<arena::Simulator> sim;
  glue::MetadataStore metadata;
};

extern "C" {

TSR_EXPORT uint32_t tsr_abi_version(void) { return TSR_ABI_VERSION; }

TSR_EXPORT const char* tsr_problem_name(void) { return kName; }

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  try {
    auto instance = std::make_unique<tsr_instance>();
    instance->options = read_options(options_toml);
    const auto& o = instance->options;
    instance->sim = std::make_unique<arena::Simulator>(read_layout(o), o.robot);
    const arena::Layout& layout = instance->sim->layout();
    auto& m = instance->metadata;
    m.name = kName;
    m.summary = "differential-drive robot with a neural controller in a " +
                std::to_string(layout.width).substr(0, 5) + " x " +
                std::to_string(layout.height).substr(0, 5) +
                " m arena: final position, fitness = -(final distance to the goal)";
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
    for (std::size_t i = 0; i < o.robot.trace; ++i) m.extra_names.push_back("trace_x_" + std::to_string(i));
    for (std::size_t i = 0; i < o.robot.trace; ++i) m.extra_names.push_back("trace_y_" + std::to_string(i));
    m.finish();
    return instance.release();
  } catch (const std::exception& e) {
    glue::write_error(error, error_size, e.what());
  } catch (...) {
    glue::write_error(error, error_size, "unknown error while reading the options");
  }
  return nullptr;
}

TSR_EXPORT void tsr_describe(const tsr_instance* instance, tsr_metadata* out) {
  instance->metadata.describe(out);
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

TSR_EXPORT void tsr_destroy(tsr_instance* instance) { delete instance; }

}  // extern "C"
