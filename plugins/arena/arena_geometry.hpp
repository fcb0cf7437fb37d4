// Plane geometry of the arena problem: vectors, wall segments, exact ray-segment intersection
// (rangefinders) and the first contact of a moving disc with a segment (collisions without
// tunnelling). Header-only and standard library only, so tests call the code the plugin runs.
#pragma once

#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>

namespace tessera::arena {

struct Vec2 {
  double x = 0.0;
  double y = 0.0;
};

inline Vec2 operator+(Vec2 a, Vec2 b) {
  return {a.x + b.x, a.y + b.y};
}
inline Vec2 operator-(Vec2 a, Vec2 b) {
  return {a.x - b.x, a.y - b.y};
}
inline Vec2 operator*(Vec2 a, double s) {
  return {a.x * s, a.y * s};
}
inline double dot(Vec2 a, Vec2 b) {
  return a.x * b.x + a.y * b.y;
}
inline double cross(Vec2 a, Vec2 b) {
  return a.x * b.y - a.y * b.x;
}
// Plain square root: std::hypot's overflow care costs several times more and is not needed
// at arena scales.
inline double norm(Vec2 a) {
  return std::sqrt(a.x * a.x + a.y * a.y);
}

// A wall: a line segment of zero thickness from a to b.
struct Segment {
  Vec2 a;
  Vec2 b;
};

// Distance along the ray origin + t * dir (dir of unit length, t >= 0) to the segment, or
// nothing when the ray misses it. Solves origin + t dir = a + s (b - a) with Cramer's rule;
// a ray parallel to the segment never reports a hit (it would graze a zero-thickness wall).
inline std::optional<double> ray_segment(Vec2 origin, Vec2 dir, const Segment& wall) {
  const Vec2 e = wall.b - wall.a;
  const double denom = cross(dir, e);
  if (std::fabs(denom) < 1e-15) return std::nullopt;
  const Vec2 w = wall.a - origin;
  const double t = cross(w, e) / denom;
  const double s = cross(w, dir) / denom;
  if (t < 0.0 || s < 0.0 || s > 1.0) return std::nullopt;
  return t;
}

// Squared shortest distance from point p to the segment.
inline double point_segment_distance2(Vec2 p, const Segment& wall) {
  const Vec2 e = wall.b - wall.a;
  const double len2 = dot(e, e);
  double s = len2 > 0.0 ? dot(p - wall.a, e) / len2 : 0.0;
  s = std::clamp(s, 0.0, 1.0);
  const Vec2 q = p - (wall.a + e * s);
  return dot(q, q);
}

// Shortest distance from point p to the segment.
inline double point_segment_distance(Vec2 p, const Segment& wall) {
  return std::sqrt(point_segment_distance2(p, wall));
}

// A disc of radius r moves from p to p + d. Returns the smallest fraction t in [0, 1] of the
// move at which its rim touches the segment, or nothing when it never does. The set of centres
// at distance <= r from a segment is a capsule: two offset lines plus a circle around each end,
// so the first contact is the earliest of the line and circle crossings. A disc that already
// touches and moves deeper gets t = 0; one moving away or along the wall is free to go.
inline std::optional<double> swept_disc_segment(Vec2 p, Vec2 d, double r, const Segment& wall) {
  double best = std::numeric_limits<double>::infinity();
  const Vec2 e = wall.b - wall.a;
  const double len = norm(e);
  if (len > 0.0) {
    const Vec2 n{-e.y / len, e.x / len};
    const double signed0 = dot(p - wall.a, n);
    const double side = signed0 >= 0.0 ? 1.0 : -1.0;
    const double h0 = side * signed0;      // distance from the wall's line
    const double rate = side * dot(d, n);  // its change over the whole move
    if (rate < 0.0) {
      const double t = h0 > r ? (h0 - r) / -rate : 0.0;
      if (t <= 1.0) {
        const double along = dot(p + d * t - wall.a, e) / len;
        if (along >= 0.0 && along <= len) best = t;
      }
    }
  }
  for (const Vec2 c : {wall.a, wall.b}) {
    const Vec2 f = p - c;
    const double qa = dot(d, d);
    if (qa == 0.0) continue;
    const double qb = 2.0 * dot(f, d);
    const double qc = dot(f, f) - r * r;
    if (qc <= 0.0) {
      if (qb < 0.0) best = 0.0;  // touching the end already and moving closer
      continue;
    }
    const double disc = qb * qb - 4.0 * qa * qc;
    if (disc < 0.0) continue;
    const double t = (-qb - std::sqrt(disc)) / (2.0 * qa);
    if (t >= 0.0 && t <= 1.0) best = std::min(best, t);
  }
  if (best == std::numeric_limits<double>::infinity()) return std::nullopt;
  return best;
}

}  // namespace tessera::arena
