// The `gait` problem as a plugin: a six-legged walker in MuJoCo (gait_sim.hpp) driven by an
// open-loop periodic controller (gait_controller.hpp).
// Genome: 36 values in [0, 1], amplitude, phase and duty cycle of each of the 12 joints in
// actuator order (swing0, lift0, swing1, ..., lift5). Descriptor: duty factor of each leg.
// Fitness: distance walked along +x in `duration` seconds, minus penalties for a fall and for
// self-collision. Extras: distance, fell, self_collision, final_height.
// Options ([problem.options]): model_file (MJCF, default: the built-in copy of
// problems/gait/hexapod.xml), duration (s, 3), period (s, 1), start_height (m, model's),
// fall_penalty (1), collision_penalty (1); damage: leg_length_scale (6 numbers in [0, 1], 0
// removes the shin and foot), stuck_joint (actuator index 0..11) with stuck_angle (radians),
// motor_strength (12 factors in [0, 10] on servo gain and torque limit).
#include <tessera/plugin.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <exception>
#include <memory>
#include <numbers>
#include <stdexcept>
#include <string>
#include <vector>

#include "common/plugin_glue.hpp"
#include "gait/builtin_model.hpp"
#include "gait/gait_sim.hpp"

namespace glue = tessera::plugin_glue;
namespace gait = tessera::gait;

namespace {

constexpr const char* kName = "gait";

struct GaitOptions {
  std::string model_file;
  gait::GaitSettings settings;
};

GaitOptions read_options(const char* text) {
  const toml::table table = glue::parse_options(text);
  glue::check_keys(table, {"model_file", "duration", "period", "start_height", "fall_penalty",
                           "collision_penalty", "leg_length_scale", "stuck_joint", "stuck_angle",
                           "motor_strength"});
  GaitOptions o;
  if (const toml::node* node = table.get("model_file")) {
    const auto value = node->value<std::string>();
    if (!value || value->empty())
      throw glue::OptionError("option 'model_file' must be a non-empty string");
    o.model_file = *value;
  }
  auto& s = o.settings;
  s.duration = glue::number_option(table, "duration", s.duration, 1e-3, 600.0);
  s.period = glue::number_option(table, "period", s.period, 0.05, 100.0);
  if (table.contains("start_height"))
    s.start_height = glue::number_option(table, "start_height", 0.0, 0.0, 1000.0);
  s.fall_penalty = glue::number_option(table, "fall_penalty", s.fall_penalty, 0.0, 1e6);
  s.collision_penalty =
      glue::number_option(table, "collision_penalty", s.collision_penalty, 0.0, 1e6);
  if (auto v = glue::numbers_option(table, "leg_length_scale", gait::kLegs); !v.empty()) {
    for (std::size_t i = 0; i < gait::kLegs; ++i) {
      if (v[i] < 0.0 || v[i] > 1.0)
        throw glue::OptionError("option 'leg_length_scale': every factor must be in [0, 1]");
      s.leg_length_scale[i] = v[i];
    }
  }
  if (auto v = glue::numbers_option(table, "motor_strength", gait::kJoints); !v.empty()) {
    for (std::size_t i = 0; i < gait::kJoints; ++i) {
      if (v[i] < 0.0 || v[i] > 10.0)
        throw glue::OptionError("option 'motor_strength': every factor must be in [0, 10]");
      s.motor_strength[i] = v[i];
    }
  }
  s.stuck_joint = static_cast<int>(
      glue::integer_option(table, "stuck_joint", -1, 0, static_cast<int>(gait::kJoints) - 1));
  if (table.contains("stuck_angle") && s.stuck_joint < 0)
    throw glue::OptionError("option 'stuck_angle' needs 'stuck_joint'");
  s.stuck_angle =
      glue::number_option(table, "stuck_angle", 0.0, -std::numbers::pi, std::numbers::pi);
  return o;
}

const char* const kLegNames[gait::kLegs] = {"front_left",  "middle_left",  "rear_left",
                                            "front_right", "middle_right", "rear_right"};

}  // namespace

struct tsr_instance {
  std::unique_ptr<gait::HexapodSim> sim;
  glue::MetadataStore metadata;
};

TESSERA_GLUE_STANDARD_EXPORTS(kName)

extern "C" {

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  return glue::create_instance(error, error_size, [&] {
    auto instance = std::make_unique<tsr_instance>();
    const GaitOptions o = read_options(options_toml);
    instance->sim =
        std::make_unique<gait::HexapodSim>(o.model_file, gait::kBuiltinModel, o.settings);
    const auto& s = o.settings;
    if (s.stuck_joint >= 0) {
      const auto j = static_cast<std::size_t>(s.stuck_joint);
      const double lo = instance->sim->joint_lower(j), hi = instance->sim->joint_upper(j);
      if (s.stuck_angle < lo || s.stuck_angle > hi)
        throw glue::OptionError("option 'stuck_angle' = " + std::to_string(s.stuck_angle) +
                                " is outside the joint's range [" + std::to_string(lo) + ", " +
                                std::to_string(hi) + "]");
    }
    auto& m = instance->metadata;
    m.name = kName;
    char seconds[32];
    std::snprintf(seconds, sizeof seconds, "%g", s.duration);
    m.summary = std::string(
                    "six-legged walker (MuJoCo), open-loop periodic gait: duty factor "
                    "per leg, fitness = distance along +x in ") +
                seconds + " s";
    std::string damage;
    for (std::size_t leg = 0; leg < gait::kLegs; ++leg)
      if (s.leg_length_scale[leg] != 1.0)
        damage += std::string(damage.empty() ? "" : ", ") + "leg " + std::to_string(leg) +
                  (s.leg_length_scale[leg] == 0.0 ? " removed" : " shortened");
    for (std::size_t j = 0; j < gait::kJoints; ++j)
      if (s.motor_strength[j] != 1.0)
        damage += std::string(damage.empty() ? "" : ", ") + "motor " + std::to_string(j) + " at " +
                  std::to_string(s.motor_strength[j]);
    if (s.stuck_joint >= 0)
      damage += std::string(damage.empty() ? "" : ", ") + "joint " + std::to_string(s.stuck_joint) +
                " stuck";
    if (!damage.empty()) m.summary += "; damage: " + damage;
    m.genome_lower.assign(gait::kGenomeSize, 0.0);
    m.genome_upper.assign(gait::kGenomeSize, 1.0);
    m.descriptor_lower.assign(gait::kLegs, 0.0);
    m.descriptor_upper.assign(gait::kLegs, 1.0);
    for (const char* leg : kLegNames) m.descriptor_names.push_back(std::string("duty_") + leg);
    m.fitness_lower = s.fitness_lower();
    m.fitness_upper = s.fitness_upper();
    m.extra_names = {"distance", "fell", "self_collision", "final_height"};
    m.finish();
    return instance.release();
  });
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* extras, char* error, size_t error_size) {
  try {
    for (std::size_t k = 0; k < count; ++k) {
      const gait::GaitResult r = instance->sim->evaluate(genomes + k * gait::kGenomeSize);
      fitness[k] = r.fitness;
      for (std::size_t leg = 0; leg < gait::kLegs; ++leg)
        descriptors[k * gait::kLegs + leg] = r.duty[leg];
      valid[k] = r.valid && std::isfinite(r.fitness);
      if (extras) {
        double* e = extras + 4 * k;
        e[0] = r.distance;
        e[1] = r.fell ? 1.0 : 0.0;
        e[2] = r.self_collision ? 1.0 : 0.0;
        e[3] = r.final_height;
      }
    }
  } catch (const std::exception& e) {
    glue::write_error(error, error_size, e.what());
    return TSR_ERROR;
  }
  return TSR_OK;
}

}  // extern "C"

// Figures, seen from above: the start and the heading to walk along (+x); a trace is the torso's
// path, every foot's touchdowns and, against time, the torso height and the feet on the floor.
extern "C" {

TSR_EXPORT int tsr_scene(tsr_instance* instance, tsr_figure* figure, char* error,
                         size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    // A short arrow shaft along +x: the full reach (max_speed x duration) would dwarf the paths.
    const auto& settings = instance->sim->settings();
    const double shaft = std::min(0.5, settings.max_speed * settings.duration);
    f.note("units", "m");
    f.add(TSR_POLYLINE, TSR_STYLE_GUIDE, "heading +x", "x,y", {0.0, 0.0, shaft, 0.0});
    f.add(TSR_POINTS, TSR_STYLE_ANCHOR, "start", "x,y", {0.0, 0.0});
  });
}

TSR_EXPORT int tsr_trace(tsr_instance* instance, const double* genome, tsr_figure* figure,
                         char* error, size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    gait::GaitRecord record;
    instance->sim->evaluate(genome, &record);
    if (record.time.empty()) throw std::runtime_error("the simulation recorded no step");
    // Positions relative to the torso's start, so that the path begins at the scene's start.
    const double x0 = record.x.front(), y0 = record.y.front();
    std::vector<double> path, height, contacts;
    std::string contact_columns = "t_s";
    for (const char* leg : kLegNames) contact_columns += std::string(",") + leg;
    for (std::size_t k = 0; k < record.time.size(); ++k) {
      path.insert(path.end(), {record.time[k], record.x[k] - x0, record.y[k] - y0});
      height.insert(height.end(), {record.time[k], record.z[k]});
      contacts.push_back(record.time[k]);
      for (bool down : record.contact[k]) contacts.push_back(down ? 1.0 : 0.0);
    }
    f.note("units", "m, s");
    f.add(TSR_POLYLINE, TSR_STYLE_LINE, "torso path", "t_s,x,y", path);
    for (std::size_t leg = 0; leg < gait::kLegs; ++leg) {
      std::vector<double> touches;
      for (std::size_t i = 0; i < record.touch_x[leg].size(); ++i)
        touches.insert(touches.end(), {record.touch_time[leg][i], record.touch_x[leg][i] - x0,
                                       record.touch_y[leg][i] - y0});
      if (!touches.empty())
        f.add(TSR_POINTS, TSR_STYLE_LINE, std::string("touchdowns ") + kLegNames[leg], "t_s,x,y",
              touches);
    }
    f.add(TSR_SERIES, TSR_STYLE_LINE, "torso height", "t_s,z", height);
    f.add(TSR_SERIES, TSR_STYLE_LINE, "feet on the floor", contact_columns, contacts);
  });
}

}  // extern "C"
