// The planar arm problem (README.md "Shipped problems", normative): n joints, every link 1/n
// long, base at the origin. Pure math on the standard library and libmvec only, so that tests
// call exactly the code the plugin runs. Arms are evaluated two at a time, one per lane of the
// vector sine and cosine (common/lane_math.hpp); a single arm is paired with itself, so an arm
// gives the same bits alone, in either lane, and in any chunk of a batch.
#pragma once

#include <cmath>
#include <cstddef>
#include <numbers>

#include "common/lane_math.hpp"

namespace tessera::arm {

inline constexpr double kPi = std::numbers::pi;

// Genome bounds of every joint angle.
inline constexpr double kAngleLower = -kPi;
inline constexpr double kAngleUpper = kPi;
// The variance of values confined to [-pi, pi] is at most pi^2 (half at each end), so the
// fitness -variance never drops below -pi^2: the QD-score offset.
inline constexpr double kFitnessLower = -kPi * kPi;
inline constexpr double kFitnessUpper = 0.0;

// Damage and a reaching task, for recovery by trial and error. A stuck joint holds
// `stuck_angle` whatever the genome asks; with a target the fitness is minus the Euclidean
// distance from the end effector to it. The descriptor stays the end effector actually reached.
struct ArmDamage {
  long stuck_joint = -1;  // 0-based index from the base; -1 = none
  double stuck_angle = 0.0;
  bool has_target = false;
  double target_x = 0.0;
  double target_y = 0.0;
  bool any() const { return stuck_joint >= 0 || has_target; }
};

// Walks two arms (lane 0: theta_a, lane 1: theta_b) from the base: joint i sits at
// p_i = sum_{k <= i} (1/n)(cos a_k, sin a_k) with a_k = theta_1 + ... + theta_k, the stuck joint
// overridden. Calls at_joint(i, angle, x, y) after joint i, with lane vectors.
template <class AtJoint>
inline void walk2(const double* theta_a, const double* theta_b, std::size_t n,
                  const ArmDamage& damage, AtJoint&& at_joint) {
  using lanes::Double2;
  const double link = 1.0 / static_cast<double>(n);
  Double2 angle = {0.0, 0.0}, x = {0.0, 0.0}, y = {0.0, 0.0};
  for (std::size_t i = 0; i < n; ++i) {
    angle += static_cast<long>(i) == damage.stuck_joint
                 ? lanes::pair(damage.stuck_angle, damage.stuck_angle)
                 : lanes::pair(theta_a[i], theta_b[i]);
    x += link * lanes::cos2(angle);
    y += link * lanes::sin2(angle);
    at_joint(i, angle, x, y);
  }
}

// End effector of one arm (undamaged).
inline void forward_kinematics(const double* theta, std::size_t n, double& x, double& y) {
  lanes::Double2 px{}, py{};
  walk2(
      theta, theta, n, ArmDamage{},
      [&](std::size_t, lanes::Double2, lanes::Double2 cx, lanes::Double2 cy) { px = cx, py = cy; });
  x = px[0];
  y = py[0];
}

// Population variance (divisor n) of the joint angles, two-pass for accuracy; the stuck joint
// (if any) counts at its stuck angle.
inline double angle_variance(const double* theta, std::size_t n, const ArmDamage& damage = {}) {
  auto at = [&](std::size_t i) {
    return static_cast<long>(i) == damage.stuck_joint ? damage.stuck_angle : theta[i];
  };
  double sum = 0.0;
  for (std::size_t i = 0; i < n; ++i) sum += at(i);
  const double mean = sum / static_cast<double>(n);
  double squares = 0.0;
  for (std::size_t i = 0; i < n; ++i) squares += (at(i) - mean) * (at(i) - mean);
  return squares / static_cast<double>(n);
}

// Fitness of an arm whose end effector is (x, y): -variance (smooth postures score higher), or
// with a target minus the distance to it.
inline double arm_fitness(const double* theta, std::size_t n, const ArmDamage& damage, double x,
                          double y) {
  return damage.has_target ? -std::hypot(x - damage.target_x, y - damage.target_y)
                           : -angle_variance(theta, n, damage);
}

// The batch kernel: `count` arms (genomes row-major, n angles each), two at a time; an odd last
// arm is paired with itself (padding, never a scalar tail). Descriptor = end-effector position.
inline void evaluate_batch(const double* genomes, std::size_t count, std::size_t n,
                           const ArmDamage& damage, double* fitness, double* descriptors) {
  for (std::size_t k = 0; k < count; k += 2) {
    const std::size_t l = k + 1 < count ? k + 1 : k;
    const double* a = genomes + k * n;
    const double* b = genomes + l * n;
    lanes::Double2 px{}, py{};
    walk2(a, b, n, damage, [&](std::size_t, lanes::Double2, lanes::Double2 cx, lanes::Double2 cy) {
      px = cx, py = cy;
    });
    descriptors[2 * k] = px[0];
    descriptors[2 * k + 1] = py[0];
    fitness[k] = arm_fitness(a, n, damage, px[0], py[0]);
    if (l != k) {
      descriptors[2 * l] = px[1];
      descriptors[2 * l + 1] = py[1];
      fitness[l] = arm_fitness(b, n, damage, px[1], py[1]);
    }
  }
}

// One arm: fitness -variance, descriptor = end-effector position (the batch kernel's result).
inline void evaluate(const double* theta, std::size_t n, double& fitness, double* descriptor) {
  evaluate_batch(theta, 1, n, ArmDamage{}, &fitness, descriptor);
}

// One damaged arm (the batch kernel's result).
inline void evaluate_damaged(const double* theta, std::size_t n, const ArmDamage& damage,
                             double& fitness, double* descriptor) {
  evaluate_batch(theta, 1, n, damage, &fitness, descriptor);
}

}  // namespace tessera::arm
