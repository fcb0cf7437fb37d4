// The six-legged walker simulated with MuJoCo: one model and one mjData per instance (one
// instance per worker thread). Loads the MJCF (problems/gait/hexapod.xml or a user's file with
// the same names), applies damage to the compiled model, runs the open-loop controller of
// gait_controller.hpp and measures distance walked, duty factors, falls and self-collisions.
#pragma once

#include <array>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "gait/gait_controller.hpp"

struct mjModel_;
struct mjData_;

namespace tessera::gait {

struct GaitSettings {
  double duration = 3.0;               // simulated seconds per evaluation
  double period = 1.0;                 // seconds per gait cycle
  std::optional<double> start_height;  // torso height at t = 0 (default: the model's)
  double fall_penalty = 1.0;           // subtracted once when the robot falls
  double collision_penalty = 1.0;      // subtracted once when legs or body hit each other
  double max_speed = 1.0;              // m/s: distances are clamped to +-max_speed * duration
  // Damage.
  std::array<double, kLegs> leg_length_scale{1, 1, 1, 1, 1, 1};  // shin kept; 0 removes it
  int stuck_joint = -1;      // actuator order: 2 * leg + (0 swing, 1 lift)
  double stuck_angle = 0.0;  // radians
  std::array<double, kJoints> motor_strength{1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1};

  double fitness_lower() const { return -max_speed * duration - fall_penalty - collision_penalty; }
  double fitness_upper() const { return max_speed * duration; }
};

struct GaitResult {
  double fitness = 0.0;
  double distance = 0.0;             // torso displacement along the heading (+x), clamped
  double final_height = 0.0;         // torso height at the end
  std::array<double, kLegs> duty{};  // share of steps each foot touched the floor
  bool fell = false;                 // the torso tilted beyond 60 degrees at some point
  bool self_collision = false;
  bool valid = true;  // false when the simulation went unstable
};

// What one evaluation did over time, for drawings (tsr_trace): the torso every `every` seconds
// and each foot where it touched down.
struct GaitRecord {
  double every = 0.02;                           // s between samples
  std::vector<double> time, x, y, z;             // torso position
  std::vector<std::array<bool, kLegs>> contact;  // feet on the floor at each sample
  std::array<std::vector<double>, kLegs> touch_x{}, touch_y{}, touch_time{};  // touchdowns
};

class HexapodSim {
 public:
  // `model_file` empty: the MJCF text `builtin_xml`. Throws std::runtime_error with one line.
  HexapodSim(const std::string& model_file, const char* builtin_xml, GaitSettings settings);
  ~HexapodSim();
  HexapodSim(const HexapodSim&) = delete;
  HexapodSim& operator=(const HexapodSim&) = delete;

  // genome: kGenomeSize values in [0, 1] (amplitude, phase, duty per joint).
  // `record`, when given, receives the torso path, the contacts and the touchdowns.
  GaitResult evaluate(const double* genome, GaitRecord* record = nullptr);

  const GaitSettings& settings() const { return settings_; }
  double timestep() const;
  double joint_lower(std::size_t joint) const;  // range of the joint behind actuator `joint`
  double joint_upper(std::size_t joint) const;

 private:
  void find_names();
  void apply_damage();

  GaitSettings settings_;
  mjModel_* model_ = nullptr;
  mjData_* data_ = nullptr;
  int floor_ = -1;
  int torso_body_ = -1;
  int root_qpos_ = -1;
  std::array<int, kLegs> foot_{};
  std::array<int, kLegs> shin_body_{};
  std::array<int, kJoints> actuator_{};
  std::array<int, kJoints> joint_{};
  std::array<double, kJoints> original_lower_{};
  std::array<double, kJoints> original_upper_{};
};

}  // namespace tessera::gait
