// One episode of the arena problem: the robot senses (rangefinder fan, goal bearing and
// distance), its neural controller sets the wheel speeds, the kinematics advance a fixed step,
// walls stop it. The episode records the final pose, path length, area covered, when the goal
// and each mark were first reached, and optionally evenly spaced positions along the way.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <numbers>
#include <span>
#include <vector>

#include "arena_controller.hpp"
#include "arena_geometry.hpp"
#include "arena_layout.hpp"
#include "arena_raster.hpp"
#include "arena_robot.hpp"

namespace tessera::arena {

struct RobotSettings {
  double radius = 0.25;       // m
  double wheel_base = 0.5;    // m, distance between the wheels
  double max_speed = 1.0;     // m/s per wheel
  double dt = 0.2;            // s, fixed step
  double duration = 40.0;     // s
  std::size_t rays = 5;       // rangefinders, spread evenly over `fan`
  double fan = 180.0;         // degrees, centred on the heading
  double range = 3.0;         // m, beyond the rim
  std::size_t hidden = 5;     // hidden tanh units (0: inputs drive the wheels directly)
  bool recurrent = false;     // Elman context units
  double raster = 0.2;        // m, cell side for area covered
  bool stop_at_goal = false;  // end the episode when the goal is reached
  std::size_t samples = 1;    // positions in the descriptor (evenly spaced in time, last = final)
  std::size_t trace = 0;      // positions reported as extras (for drawings)

  std::size_t steps() const { return static_cast<std::size_t>(std::llround(duration / dt)); }
  std::size_t inputs() const { return rays + 3; }
};

struct Episode {
  Pose final_pose;
  double path_length = 0.0;
  double area_covered = 0.0;
  double goal_time = -1.0;         // s; -1 = never reached
  std::vector<double> mark_times;  // per mark, s; -1 = never reached
  std::vector<Vec2> samples;       // settings.samples positions
  std::vector<Vec2> trace;         // settings.trace positions
  std::size_t collisions = 0;      // steps cut short by a wall
};

class Simulator {
 public:
  Simulator(Layout layout, RobotSettings settings)
      : layout_(std::move(layout)),
        settings_(settings),
        raster_(layout_.width, layout_.height, settings_.raster, layout_.walls),
        controller_(settings_.inputs(), settings_.hidden, settings_.recurrent),
        inputs_(settings_.inputs(), 0.0) {
    for (std::size_t k = 0; k < settings_.rays; ++k) {
      const double fan = settings_.fan * std::numbers::pi / 180.0;
      const double angle =
          settings_.rays == 1
              ? 0.0
              : -0.5 * fan + fan * static_cast<double>(k) / static_cast<double>(settings_.rays - 1);
      ray_dirs_.push_back({std::cos(angle), std::sin(angle)});
    }
  }

  const Layout& layout() const { return layout_; }
  const RobotSettings& settings() const { return settings_; }
  std::size_t genome_size() const { return controller_.weight_count(); }
  std::size_t free_cells() const { return raster_.free_cells(); }

  // Distance from the robot's centre along a ray to the nearest wall (inf when none).
  double cast(Vec2 from, double angle) const {
    return cast(from, Vec2{std::cos(angle), std::sin(angle)});
  }
  double cast(Vec2 from, Vec2 dir) const {
    double best = std::numeric_limits<double>::infinity();
    for (const Segment& wall : layout_.walls)
      if (const auto t = ray_segment(from, dir, wall)) best = std::min(best, *t);
    return best;
  }

  Episode run(std::span<const double> weights) {
    Episode ep;
    const std::size_t steps = settings_.steps();
    Pose pose{layout_.start, layout_.heading};
    controller_.reset();
    raster_.clear();
    raster_.sweep(pose.at, pose.at, settings_.radius);
    ep.mark_times.assign(layout_.marks.size(), -1.0);
    check_reached(pose.at, 0.0, ep);
    std::size_t next_sample = 0, next_trace = 0;
    bool done = ep.goal_time >= 0.0 && settings_.stop_at_goal;
    for (std::size_t step = 1; step <= steps && !done; ++step) {
      sense(pose);
      double out[2];
      controller_.step(weights, inputs_, out);
      const double vl = out[0] * settings_.max_speed;
      const double vr = out[1] * settings_.max_speed;
      Pose next = drive(pose, vl, vr, settings_.wheel_base, settings_.dt);
      Vec2 stopped;
      if (move_disc(pose.at, next.at, settings_.radius, layout_.walls, stopped)) ++ep.collisions;
      next.at = stopped;
      raster_.sweep(pose.at, next.at, settings_.radius);
      ep.path_length += norm(next.at - pose.at);
      pose = next;
      const double time = static_cast<double>(step) * settings_.dt;
      check_reached(pose.at, time, ep);
      done = ep.goal_time >= 0.0 && settings_.stop_at_goal;
      record(settings_.samples, step, steps, pose.at, next_sample, ep.samples);
      record(settings_.trace, step, steps, pose.at, next_trace, ep.trace);
    }
    // After an early stop the remaining samples stay at the final position.
    while (ep.samples.size() < settings_.samples) ep.samples.push_back(pose.at);
    while (ep.trace.size() < settings_.trace) ep.trace.push_back(pose.at);
    ep.final_pose = pose;
    ep.area_covered = raster_.covered();
    return ep;
  }

 private:
  void sense(const Pose& pose) {
    // Ray directions: the heading rotated by each ray's fixed offset (one sin/cos per step).
    const double c = std::cos(pose.heading), s = std::sin(pose.heading);
    for (std::size_t k = 0; k < settings_.rays; ++k) {
      const Vec2 off = ray_dirs_[k];
      const double free =
          cast(pose.at, Vec2{c * off.x - s * off.y, s * off.x + c * off.y}) - settings_.radius;
      // 1 when touching a wall, 0 when nothing is within range.
      inputs_[k] = 1.0 - std::clamp(free, 0.0, settings_.range) / settings_.range;
    }
    const Vec2 to_goal = layout_.goal - pose.at;
    const double bearing = std::atan2(to_goal.y, to_goal.x) - pose.heading;
    inputs_[settings_.rays] = std::sin(bearing);
    inputs_[settings_.rays + 1] = std::cos(bearing);
    inputs_[settings_.rays + 2] = norm(to_goal) / layout_.diagonal();
  }

  void check_reached(Vec2 at, double time, Episode& ep) const {
    if (ep.goal_time < 0.0 && norm(at - layout_.goal) <= layout_.goal_radius) ep.goal_time = time;
    for (std::size_t m = 0; m < layout_.marks.size(); ++m)
      if (ep.mark_times[m] < 0.0 && norm(at - layout_.marks[m].at) <= layout_.marks[m].radius)
        ep.mark_times[m] = time;
  }

  // Positions at steps round(steps * (i + 1) / count), i = 0..count-1.
  static void record(std::size_t count, std::size_t step, std::size_t steps, Vec2 at,
                     std::size_t& next, std::vector<Vec2>& out) {
    while (next < count && step * count >= steps * (next + 1)) {
      out.push_back(at);
      ++next;
    }
  }

  Layout layout_;
  RobotSettings settings_;
  AreaRaster raster_;
  NeuralController controller_;
  std::vector<double> inputs_;
  std::vector<Vec2> ray_dirs_;  // ray directions relative to the heading
};

}  // namespace tessera::arena
