// The differential-drive robot: a disc whose two wheels, `wheel_base` apart, turn at speeds
// v_l and v_r. Over a step of constant wheel speeds the robot moves along a circular arc of
// radius R = L (v_r + v_l) / (2 (v_r - v_l)) at angular speed w = (v_r - v_l) / L (Siegwart &
// Nourbakhsh, Introduction to Autonomous Mobile Robots, MIT Press 2004); the step integrates that
// arc exactly, so the fixed step size adds no drift. Walls stop the robot at first contact.
#pragma once

#include <cmath>
#include <numbers>
#include <span>

#include "arena_geometry.hpp"

namespace tessera::arena {

struct Pose {
  Vec2 at;
  double heading = 0.0;  // radians, 0 = +x, counter-clockwise
};

inline double wrap_angle(double a) {
  a = std::remainder(a, 2.0 * std::numbers::pi);  // into [-pi, pi]
  return a;
}

// Pose after `dt` seconds at constant wheel speeds, ignoring walls.
inline Pose drive(const Pose& pose, double v_left, double v_right, double wheel_base, double dt) {
  const double v = 0.5 * (v_left + v_right);
  const double w = (v_right - v_left) / wheel_base;
  Pose next;
  if (std::fabs(w * dt) < 1e-12) {
    next.at = pose.at + Vec2{std::cos(pose.heading), std::sin(pose.heading)} * (v * dt);
  } else {
    const double r = v / w;
    const double turned = pose.heading + w * dt;
    next.at = pose.at + Vec2{r * (std::sin(turned) - std::sin(pose.heading)),
                             -r * (std::cos(turned) - std::cos(pose.heading))};
  }
  next.heading = wrap_angle(pose.heading + w * dt);
  return next;
}

// Moves a disc of radius r from `from` towards `to` along the chord, stopping it at the first
// wall it would touch (a hair short of contact, so it never starts a step overlapping a wall).
// The chord differs from the driven arc by its sagitta, (v dt)^2 / (8 R) at most: recorded
// positions are always chord ends, so the robot's path never crosses a wall. Returns true when
// a wall stopped it.
inline bool move_disc(Vec2 from, Vec2 to, double r, std::span<const Segment> walls, Vec2& out) {
  const Vec2 d = to - from;
  const double length = norm(d);
  double t = 1.0;
  bool hit = false;
  if (length > 0.0) {
    for (const Segment& wall : walls) {
      if (const auto contact = swept_disc_segment(from, d, r, wall); contact && *contact < t) {
        t = *contact;
        hit = true;
      }
    }
  }
  if (hit) t = std::max(0.0, t - 1e-9 / length);
  out = from + d * t;
  return hit;
}

}  // namespace tessera::arena
