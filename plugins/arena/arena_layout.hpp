// Arena layout files: Tessera's own plain-text format describing a rectangular arena with
// line-segment walls, the robot's start pose, a goal and optional named marks (extra goal
// locations whose first visit is timed, used by `tessera transfer`). One directive per line,
// numbers in metres and degrees, '#' starts a comment:
//
//   arena WIDTH HEIGHT          first directive; the four border walls are implied
//   start X Y HEADING           heading in degrees, 0 = +x, counter-clockwise
//   goal X Y RADIUS             reached when the robot's centre is within RADIUS
//   wall X1 Y1 X2 Y2            a wall segment
//   box X1 Y1 X2 Y2             the four walls of an axis-aligned rectangle
//   mark NAME X Y RADIUS        a named location (letters, digits, '_' and '-')
//
// Header-only (standard library only) so that the plugin and the tests read the same files with
// the same code.
#pragma once

#include <cctype>
#include <cmath>
#include <fstream>
#include <numbers>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "arena_geometry.hpp"

namespace tessera::arena {

struct Mark {
  std::string name;
  Vec2 at;
  double radius = 0.0;
};

struct Layout {
  double width = 0.0;
  double height = 0.0;
  Vec2 start;
  double heading = 0.0;  // radians
  Vec2 goal;
  double goal_radius = 0.0;
  std::vector<Segment> walls;  // the border walls first, then the file's walls in order
  std::vector<Mark> marks;

  double diagonal() const { return std::hypot(width, height); }
};

// One-line fault "SOURCE:LINE: what".
class LayoutError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

namespace detail {

inline bool valid_mark_name(const std::string& name) {
  if (name.empty() || name.size() > 64) return false;
  for (char c : name)
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-')) return false;
  return true;
}

}  // namespace detail

// Parses layout text; `source` names it in error messages.
inline Layout parse_layout(const std::string& text, const std::string& source) {
  Layout layout;
  bool have_arena = false, have_start = false, have_goal = false;
  std::istringstream lines(text);
  std::string line;
  int number = 0;
  auto fail = [&](const std::string& what) -> void {
    throw LayoutError(source + ":" + std::to_string(number) + ": " + what);
  };
  auto inside = [&](Vec2 p) {
    return p.x >= 0.0 && p.x <= layout.width && p.y >= 0.0 && p.y <= layout.height;
  };
  while (std::getline(lines, line)) {
    ++number;
    if (const auto hash = line.find('#'); hash != std::string::npos) line.erase(hash);
    std::istringstream words(line);
    std::string directive;
    if (!(words >> directive)) continue;
    std::string name;
    if (directive == "mark" && !(words >> name)) fail("mark needs NAME X Y RADIUS");
    std::vector<double> v;
    std::string word;
    while (words >> word) {
      std::size_t used = 0;
      double value = 0.0;
      try {
        value = std::stod(word, &used);
      } catch (const std::exception&) {
        used = 0;
      }
      if (used != word.size() || !std::isfinite(value))
        fail("'" + word + "' is not a finite number");
      v.push_back(value);
    }
    auto want = [&](std::size_t n, const char* form) {
      if (v.size() != n)
        fail(directive + " takes " + std::to_string(n) + " numbers (" + form + "), found " +
             std::to_string(v.size()));
    };
    if (directive != "arena" && !have_arena)
      fail("the first directive must be 'arena WIDTH HEIGHT'");
    if (directive == "arena") {
      if (have_arena) fail("a second 'arena' directive");
      want(2, "WIDTH HEIGHT");
      if (!(v[0] > 0.0 && v[1] > 0.0)) fail("arena width and height must be positive");
      layout.width = v[0];
      layout.height = v[1];
      const Vec2 c00{0, 0}, c10{v[0], 0}, c11{v[0], v[1]}, c01{0, v[1]};
      layout.walls = {{c00, c10}, {c10, c11}, {c11, c01}, {c01, c00}};
      have_arena = true;
    } else if (directive == "start") {
      if (have_start) fail("a second 'start' directive");
      want(3, "X Y HEADING");
      layout.start = {v[0], v[1]};
      if (!inside(layout.start)) fail("start lies outside the arena");
      layout.heading = v[2] * std::numbers::pi / 180.0;
      have_start = true;
    } else if (directive == "goal") {
      if (have_goal) fail("a second 'goal' directive");
      want(3, "X Y RADIUS");
      layout.goal = {v[0], v[1]};
      layout.goal_radius = v[2];
      if (!inside(layout.goal)) fail("goal lies outside the arena");
      if (!(v[2] > 0.0)) fail("goal radius must be positive");
      have_goal = true;
    } else if (directive == "wall" || directive == "box") {
      want(4, "X1 Y1 X2 Y2");
      const Vec2 a{v[0], v[1]}, b{v[2], v[3]};
      if (!inside(a) || !inside(b)) fail(directive + " reaches outside the arena");
      if (directive == "wall") {
        if (a.x == b.x && a.y == b.y) fail("wall of zero length");
        layout.walls.push_back({a, b});
      } else {
        if (a.x == b.x || a.y == b.y) fail("box of zero width or height");
        const Vec2 ab{b.x, a.y}, ba{a.x, b.y};
        layout.walls.push_back({a, ab});
        layout.walls.push_back({ab, b});
        layout.walls.push_back({b, ba});
        layout.walls.push_back({ba, a});
      }
    } else if (directive == "mark") {
      want(3, "X Y RADIUS");
      if (!detail::valid_mark_name(name))
        fail("mark name '" + name + "' must be 1-64 letters, digits, '_' or '-'");
      for (const auto& m : layout.marks)
        if (m.name == name) fail("a second mark named '" + name + "'");
      if (!inside({v[0], v[1]})) fail("mark '" + name + "' lies outside the arena");
      if (!(v[2] > 0.0)) fail("mark radius must be positive");
      layout.marks.push_back({name, {v[0], v[1]}, v[2]});
    } else {
      fail("unknown directive '" + directive + "' (expected arena, start, goal, wall, box, mark)");
    }
  }
  number = 0;
  if (!have_arena) throw LayoutError(source + ": no 'arena WIDTH HEIGHT' directive");
  if (!have_start) throw LayoutError(source + ": no 'start X Y HEADING' directive");
  if (!have_goal) throw LayoutError(source + ": no 'goal X Y RADIUS' directive");
  return layout;
}

// Reads and parses a layout file.
inline Layout load_layout(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw LayoutError(path + ": cannot open the arena layout file");
  std::ostringstream text;
  text << in.rdbuf();
  return parse_layout(text.str(), path);
}

}  // namespace tessera::arena
