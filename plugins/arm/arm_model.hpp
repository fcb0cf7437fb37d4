// The planar arm problem (README.md "Shipped problems", normative): n joints, every link 1/n
// long, base at the origin. Pure math on the standard library only, so that tests call exactly
// the code the plugin runs.
#pragma once

#include <cmath>
#include <cstddef>
#include <numbers>

namespace tessera::arm {

inline constexpr double kPi = std::numbers::pi;

// Genome bounds of every joint angle.
inline constexpr double kAngleLower = -kPi;
inline constexpr double kAngleUpper = kPi;
// The variance of values confined to [-pi, pi] is at most pi^2 (half at each end), so the
// fitness -variance never drops below -pi^2: the QD-score offset.
inline constexpr double kFitnessLower = -kPi * kPi;
inline constexpr double kFitnessUpper = 0.0;

// End effector p = sum_i (1/n)(cos a_i, sin a_i) with a_i = theta_1 + ... + theta_i.
inline void forward_kinematics(const double* theta, std::size_t n, double& x, double& y) {
  const double link = 1.0 / static_cast<double>(n);
  double angle = 0.0;
  x = 0.0;
  y = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    angle += theta[i];
    x += link * std::cos(angle);
    y += link * std::sin(angle);
  }
}

// Population variance (divisor n) of the joint angles, two-pass for accuracy.
inline double angle_variance(const double* theta, std::size_t n) {
  double sum = 0.0;
  for (std::size_t i = 0; i < n; ++i) sum += theta[i];
  const double mean = sum / static_cast<double>(n);
  double squares = 0.0;
  for (std::size_t i = 0; i < n; ++i) squares += (theta[i] - mean) * (theta[i] - mean);
  return squares / static_cast<double>(n);
}

// Fitness -variance (smooth postures score higher); descriptor = end-effector position.
inline void evaluate(const double* theta, std::size_t n, double& fitness, double* descriptor) {
  forward_kinematics(theta, n, descriptor[0], descriptor[1]);
  fitness = -angle_variance(theta, n);
}

// Damage and a reaching task, for recovery by trial and error. A stuck joint holds
// `stuck_angle` whatever the genome asks; with a target the fitness is minus the Euclidean
// distance from the end effector to it. The descriptor stays the end effector actually reached.
struct ArmDamage {
  long stuck_joint = -1;  // 0-based index from the base; -1 = none
  double stuck_angle = 0.0;
  bool has_target = false;
  double target_x = 0.0;
  double target_y = 0.0;
};

// `scratch` holds n angles (the genome with the stuck joint overridden).
inline void evaluate_damaged(const double* theta, std::size_t n, const ArmDamage& damage,
                             double* scratch, double& fitness, double* descriptor) {
  for (std::size_t i = 0; i < n; ++i) scratch[i] = theta[i];
  if (damage.stuck_joint >= 0) scratch[damage.stuck_joint] = damage.stuck_angle;
  forward_kinematics(scratch, n, descriptor[0], descriptor[1]);
  fitness = damage.has_target
                ? -std::hypot(descriptor[0] - damage.target_x, descriptor[1] - damage.target_y)
                : -angle_variance(scratch, n);
}

}  // namespace tessera::arm
