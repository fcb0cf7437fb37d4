// The `arm` problem as a plugin: the C ABI of include/tessera/plugin.h around arm_model.hpp.
// Options ([problem.options]): joints (integer, default 10); damage and task for recovery by
// trial and error: stuck_joint (0-based index), stuck_angle (radians, default 0),
// target = [x, y] (fitness becomes minus the distance of the end effector to the target).
#include <tessera/plugin.h>

#include <cmath>
#include <exception>
#include <memory>
#include <string>
#include <vector>

#include "arm/arm_model.hpp"
#include "common/plugin_glue.hpp"

namespace glue = tessera::plugin_glue;

namespace {

constexpr const char* kName = "arm";

// Every option of the arm problem; new options go here and into check_keys below.
struct ArmOptions {
  std::size_t joints = 10;
  tessera::arm::ArmDamage damage;
};

ArmOptions read_options(const char* text) {
  const toml::table table = glue::parse_options(text);
  glue::check_keys(table, {"joints", "stuck_joint", "stuck_angle", "target"});
  ArmOptions options;
  options.joints = static_cast<std::size_t>(glue::integer_option(table, "joints", 10, 1, 1000000));
  auto& damage = options.damage;
  damage.stuck_joint = static_cast<long>(glue::integer_option(
      table, "stuck_joint", -1, 0, static_cast<std::int64_t>(options.joints) - 1));
  if (table.contains("stuck_angle") && damage.stuck_joint < 0)
    throw glue::OptionError("option 'stuck_angle' needs 'stuck_joint'");
  damage.stuck_angle = glue::number_option(table, "stuck_angle", 0.0, tessera::arm::kAngleLower,
                                           tessera::arm::kAngleUpper);
  const std::vector<double> target = glue::numbers_option(table, "target", 2);
  if (!target.empty()) {
    damage.has_target = true;
    damage.target_x = target[0];
    damage.target_y = target[1];
  }
  return options;
}

}  // namespace

struct tsr_instance {
  ArmOptions options;
  glue::MetadataStore metadata;
};

TESSERA_GLUE_STANDARD_EXPORTS(kName)

extern "C" {

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  return glue::create_instance(error, error_size, [&] {
    auto instance = std::make_unique<tsr_instance>();
    instance->options = read_options(options_toml);
    const std::size_t n = instance->options.joints;
    auto& m = instance->metadata;
    m.name = kName;
    m.summary = "planar arm, " + std::to_string(n) +
                " joints: end-effector position, fitness = -(variance of the joint angles)";
    m.genome_lower.assign(n, tessera::arm::kAngleLower);
    m.genome_upper.assign(n, tessera::arm::kAngleUpper);
    m.descriptor_lower = {-1.0, -1.0};
    m.descriptor_upper = {1.0, 1.0};
    m.descriptor_names = {"x", "y"};
    m.fitness_lower = tessera::arm::kFitnessLower;
    m.fitness_upper = tessera::arm::kFitnessUpper;
    const auto& damage = instance->options.damage;
    if (damage.stuck_joint >= 0)
      m.summary += "; joint " + std::to_string(damage.stuck_joint) + " stuck at " +
                   std::to_string(damage.stuck_angle) + " rad";
    if (damage.has_target) {
      // The end effector stays within the unit disc, so it is never farther from the target
      // than 1 + |target|.
      m.summary += "; task: reach (" + std::to_string(damage.target_x) + ", " +
                   std::to_string(damage.target_y) + "), fitness = -distance";
      m.fitness_lower = -(1.0 + std::hypot(damage.target_x, damage.target_y));
    }
    m.finish();
    return instance.release();
  });
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* /*extras*/, char* /*error*/, size_t /*error_size*/) {
  tessera::arm::evaluate_batch(genomes, count, instance->options.joints, instance->options.damage,
                               fitness, descriptors);
  for (std::size_t k = 0; k < count; ++k)
    valid[k] = std::isfinite(fitness[k]) && std::isfinite(descriptors[2 * k]) &&
               std::isfinite(descriptors[2 * k + 1]);
  return TSR_OK;
}

}  // extern "C"

// Figures: the base, the reach and every elite's end effector (the descriptor is the end
// effector's position, so it maps onto the scene unchanged); a trace is the posture, joint by
// joint, with the stuck joint applied as in evaluation.
extern "C" {

TSR_EXPORT int tsr_scene(tsr_instance* instance, tsr_figure* figure, char* error,
                         size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    f.note("units", "arm lengths (total length 1)");
    f.add(TSR_CIRCLES, TSR_STYLE_GUIDE, "reach", "x,y,r", {0.0, 0.0, 1.0});
    f.add(TSR_POINTS, TSR_STYLE_ANCHOR, "base", "x,y", {0.0, 0.0});
    const auto& damage = instance->options.damage;
    if (damage.has_target)
      f.add(TSR_CIRCLES, TSR_STYLE_ZONE, "target", "x,y,r",
            {damage.target_x, damage.target_y, 0.03});
    f.add(TSR_DESCRIPTOR_MAP, TSR_STYLE_LINE, "end effector", "ix,sx,ox,iy,sy,oy",
          {0.0, 1.0, 0.0, 1.0, 1.0, 0.0});
  });
}

TSR_EXPORT int tsr_trace(tsr_instance* instance, const double* genome, tsr_figure* figure,
                         char* error, size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    const std::size_t n = instance->options.joints;
    const auto& damage = instance->options.damage;
    // Joint i sits at the end of link i: the evaluation's own walk, so the last joint is the
    // descriptor to the bit.
    std::vector<double> joints = {0.0, 0.0, 0.0}, angles;
    tessera::arm::walk2(
        genome, genome, n, damage,
        [&](std::size_t i, tessera::lanes::Double2 angle, tessera::lanes::Double2 x,
            tessera::lanes::Double2 y) {
          const double theta =
              static_cast<long>(i) == damage.stuck_joint ? damage.stuck_angle : genome[i];
          joints.insert(joints.end(), {static_cast<double>(i + 1), x[0], y[0]});
          angles.insert(angles.end(), {static_cast<double>(i + 1), theta, angle[0]});
        });
    f.note("units", "arm lengths (total length 1); angles in radians");
    f.add(TSR_POLYLINE, TSR_STYLE_BODY, "joints", "joint,x,y", joints);
    f.add(TSR_SERIES, TSR_STYLE_LINE, "angles", "joint,relative_rad,absolute_rad", angles);
  });
}

}  // extern "C"
