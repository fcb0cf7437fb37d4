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
  bool damaged() const { return damage.stuck_joint >= 0 || damage.has_target; }
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
  std::vector<double> scratch;  // joint angles after damage
};

TESSERA_GLUE_STANDARD_EXPORTS(kName)

extern "C" {

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  try {
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
    instance->scratch.assign(n, 0.0);
    m.finish();
    return instance.release();
  } catch (const std::exception& e) {
    glue::write_error(error, error_size, e.what());
  } catch (...) {
    glue::write_error(error, error_size, "unknown error while reading the options");
  }
  return nullptr;
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* /*extras*/, char* /*error*/, size_t /*error_size*/) {
  const std::size_t n = instance->options.joints;
  for (std::size_t k = 0; k < count; ++k) {
    double* descriptor = descriptors + 2 * k;
    if (instance->options.damaged())
      tessera::arm::evaluate_damaged(genomes + k * n, n, instance->options.damage,
                                     instance->scratch.data(), fitness[k], descriptor);
    else
      tessera::arm::evaluate(genomes + k * n, n, fitness[k], descriptor);
    valid[k] =
        std::isfinite(fitness[k]) && std::isfinite(descriptor[0]) && std::isfinite(descriptor[1]);
  }
  return TSR_OK;
}

}  // extern "C"
