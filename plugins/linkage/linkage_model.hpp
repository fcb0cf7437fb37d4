// The `linkage` problem's kinematics: a planar four-bar linkage driven by its crank, analysed in
// closed form over one crank revolution. Pure math on the standard library only, so that the
// plugin (evaluation and traces) and the tests call exactly the same code.
//
// Frame and names (Norton, Design of Machinery, ch. 4 notation): ground pivots O2 = (0, 0) and
// O4 = (d, 0), so x runs along the ground link; crank O2-A of length a at angle theta2; coupler
// A-B of length b; rocker O4-B of length c at angle theta4. The coupler point P sits at distance
// p from A, at angle gamma off the line A->B (counter-clockwise positive). Lengths are in the run
// file's units (millimetres by default); the model itself is free of units.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <numbers>
#include <vector>

namespace tessera::linkage {

inline constexpr double kPi = std::numbers::pi;
inline constexpr double kRadPerDeg = kPi / 180.0;

// Genome layout: four link lengths, then the coupler point (distance, angle in degrees).
enum GenomeIndex : std::size_t {
  kGround = 0,
  kCrank = 1,
  kCoupler = 2,
  kRocker = 3,
  kPointDistance = 4,
  kPointAngle = 5,
  kGenomeSize = 6
};

struct Dimensions {
  double ground = 0.0;           // d, O2-O4
  double crank = 0.0;            // a, O2-A (input, turns fully in a crank-rocker)
  double coupler = 0.0;          // b, A-B
  double rocker = 0.0;           // c, O4-B (output, oscillates)
  double point_distance = 0.0;   // p, A-P
  double point_angle_deg = 0.0;  // gamma, angle of A->P off A->B

  static Dimensions from_genome(const double* g) {
    return {g[kGround], g[kCrank], g[kCoupler], g[kRocker], g[kPointDistance], g[kPointAngle]};
  }
};

// The two ways to assemble the loop for a given crank angle: B is one of the two points where the
// circles about A (radius b) and O4 (radius c) meet, mirror images across the diagonal O4-A.
// Open: B on the clockwise side of O4->A, so O2-A-B-O4 is a convex quadrilateral when the crank
// points up (Norton's "open" circuit, minus sign in his closed form for theta4); crossed: the
// other side (plus sign), Norton's "crossed" circuit. In a crank-rocker the branch never changes
// during the revolution, so the run file fixes it.
enum class Branch { open, crossed };

// Grashof classes (Norton, Design of Machinery, sec. 2.12; Shigley & Uicker, Theory of Machines
// and Mechanisms, ch. 1). s, l = shortest and longest link, p, q = the other two.
enum class LinkageClass {
  crank_rocker,           // Grashof, shortest link is the input crank (adjacent to ground)
  rocker_crank,           // Grashof, shortest link is the output rocker (adjacent to ground)
  double_crank,           // Grashof, shortest link is the ground (drag link)
  grashof_double_rocker,  // Grashof, shortest link is the coupler
  change_point,           // s + l = p + q: passes through a flattened (all collinear) position
  triple_rocker           // s + l > p + q: non-Grashof, no link turns fully
};

// Grashof's rule: some link can turn fully relative to the others iff s + l <= p + q.
inline bool is_grashof(double ground, double crank, double coupler, double rocker) {
  const double s = std::min({ground, crank, coupler, rocker});
  const double l = std::max({ground, crank, coupler, rocker});
  const double sum = ground + crank + coupler + rocker;
  return s + l <= sum - s - l;
}

inline LinkageClass classify(double ground, double crank, double coupler, double rocker) {
  const double s = std::min({ground, crank, coupler, rocker});
  const double l = std::max({ground, crank, coupler, rocker});
  const double pq = ground + crank + coupler + rocker - s - l;
  // Equal sums up to rounding: the change-point case.
  if (std::abs(s + l - pq) <= 1e-12 * pq) return LinkageClass::change_point;
  if (s + l > pq) return LinkageClass::triple_rocker;
  if (crank == s) return LinkageClass::crank_rocker;
  if (ground == s) return LinkageClass::double_crank;
  if (rocker == s) return LinkageClass::rocker_crank;
  return LinkageClass::grashof_double_rocker;
}

// The input crank is the shortest link. The crank must be strictly shorter than the ground:
// when they are equal A passes through O4 and the rocker angle is undefined there.
inline bool crank_is_shortest(const Dimensions& m) {
  return m.crank <= m.coupler && m.crank <= m.rocker && m.crank < m.ground;
}

// Joint positions at one crank angle.
struct Pose {
  double crank_angle = 0.0;   // theta2, radians
  double ax = 0.0, ay = 0.0;  // crank pin A
  double bx = 0.0, by = 0.0;  // rocker pin B
  double px = 0.0, py = 0.0;  // coupler point P
  double cos_mu = 0.0;        // cosine of the transmission angle (between B->A and B->O4)
  double transmission_angle_deg() const {
    return std::acos(std::clamp(cos_mu, -1.0, 1.0)) / kRadPerDeg;
  }
};

// Position analysis in closed form. B lies on the circle of radius b about A and the circle of
// radius c about O4; with the diagonal f = |A - O4|, the angle psi at O4 between O4->A and O4->B
// follows from the law of cosines, and the branch picks the side. Returns false when the loop
// does not close at this crank angle (|cos psi| > 1: the circles do not meet).
inline bool solve_pose(const Dimensions& m, Branch branch, double cos2, double sin2,
                       double cos_gamma, double sin_gamma, Pose& out) {
  const double a = m.crank, b = m.coupler, c = m.rocker, d = m.ground;
  out.ax = a * cos2;
  out.ay = a * sin2;
  const double vx = out.ax - d, vy = out.ay;
  const double f2 = vx * vx + vy * vy;
  if (!(f2 > 0.0)) return false;
  const double f = std::sqrt(f2);
  double cos_psi = (c * c + f2 - b * b) / (2.0 * c * f);
  // Rounding may push a touching configuration just past 1; beyond that the loop is open.
  if (!(std::abs(cos_psi) <= 1.0 + 1e-12)) return false;
  cos_psi = std::clamp(cos_psi, -1.0, 1.0);
  const double sin_psi = (branch == Branch::open ? -1.0 : 1.0) * std::sqrt(1.0 - cos_psi * cos_psi);
  const double ux = vx / f, uy = vy / f;
  out.bx = d + c * (ux * cos_psi - uy * sin_psi);
  out.by = c * (ux * sin_psi + uy * cos_psi);
  // Unit vector along the coupler, turned by gamma towards the coupler point.
  const double ex = (out.bx - out.ax) / b, ey = (out.by - out.ay) / b;
  const double p = m.point_distance;
  out.px = out.ax + p * (ex * cos_gamma - ey * sin_gamma);
  out.py = out.ay + p * (ex * sin_gamma + ey * cos_gamma);
  out.cos_mu = ((out.ax - out.bx) * (d - out.bx) + (out.ay - out.by) * (0.0 - out.by)) / (b * c);
  return true;
}

// Crank angles theta2_k = 2 pi k / n, k = 0..n-1.
inline double sample_angle(std::size_t k, std::size_t n) {
  return 2.0 * kPi * static_cast<double>(k) / static_cast<double>(n);
}

// The whole cycle at n samples; empty when the loop fails to close at any sample.
inline std::vector<Pose> trace(const Dimensions& m, Branch branch, std::size_t n) {
  std::vector<Pose> poses(n);
  const double g = m.point_angle_deg * kRadPerDeg;
  for (std::size_t k = 0; k < n; ++k) {
    const double t = sample_angle(k, n);
    poses[k].crank_angle = t;
    if (!solve_pose(m, branch, std::cos(t), std::sin(t), std::cos(g), std::sin(g), poses[k]))
      return {};
  }
  return poses;
}

// The flattest part of a closed path: over every run of `window` consecutive samples (wrapping
// round), the band of lines parallel to the run's least-squares (principal-axis) line that holds
// all its points; the run whose band is narrowest relative to its length along the line wins.
struct Flattest {
  double ratio = 0.0;     // band / length, dimensionless (0 = perfectly straight)
  double band = 0.0;      // band width, in length units
  double length = 0.0;    // extent along the line, in length units
  std::size_t start = 0;  // first sample of the run
};

// Buffers for flattest_part, reused across calls so that an evaluation allocates nothing.
struct FlatWorkspace {
  std::vector<double> x, y;                        // the path twice over, about its centroid
  std::vector<double> sx, sy, sxx, syy, sxy, arc;  // prefix sums over the doubled path
  std::vector<double> bound, axis;                 // per run: ratio lower bound, line angle
  std::vector<std::size_t> order;                  // runs by increasing bound
};

// Exact minimum over all n runs. Moments come from prefix sums (O(1) per run); the band pass
// (O(window)) is skipped for runs that provably cannot win: for values of mean zero the range is
// at least twice the standard deviation (Bhatia-Davis inequality), so band >= 2 sqrt(lambda_min),
// lambda_min being the across-line variance, while the length along any line is at most the run's
// arc length.
inline Flattest flattest_part(const double* x, const double* y, std::size_t n, std::size_t window,
                              FlatWorkspace& ws) {
  window = std::clamp<std::size_t>(window, 2, n);
  double cx = 0, cy = 0;
  for (std::size_t k = 0; k < n; ++k) {
    cx += x[k];
    cy += y[k];
  }
  cx /= static_cast<double>(n);
  cy /= static_cast<double>(n);
  const std::size_t m = 2 * n;
  ws.x.resize(m);
  ws.y.resize(m);
  for (auto* v : {&ws.sx, &ws.sy, &ws.sxx, &ws.syy, &ws.sxy, &ws.arc}) v->resize(m + 1);
  ws.sx[0] = ws.sy[0] = ws.sxx[0] = ws.syy[0] = ws.sxy[0] = ws.arc[0] = 0.0;
  for (std::size_t k = 0; k < m; ++k) {
    const double u = x[k % n] - cx, v = y[k % n] - cy;
    ws.x[k] = u;
    ws.y[k] = v;
    ws.sx[k + 1] = ws.sx[k] + u;
    ws.sy[k + 1] = ws.sy[k] + v;
    ws.sxx[k + 1] = ws.sxx[k] + u * u;
    ws.syy[k + 1] = ws.syy[k] + v * v;
    ws.sxy[k + 1] = ws.sxy[k] + u * v;
    const double du = k == 0 ? 0.0 : u - ws.x[k - 1], dv = k == 0 ? 0.0 : v - ws.y[k - 1];
    ws.arc[k + 1] = ws.arc[k] + std::sqrt(du * du + dv * dv);
  }
  const double w = static_cast<double>(window);
  // Lower bound of every run's ratio, then the exact band pass in increasing order of the bound
  // until the bound reaches the best ratio found: nothing left can beat it.
  ws.bound.resize(n);
  ws.order.resize(n);
  ws.axis.resize(n);
  for (std::size_t s = 0; s < n; ++s) {
    const std::size_t e = s + window;
    const double mx = (ws.sx[e] - ws.sx[s]) / w, my = (ws.sy[e] - ws.sy[s]) / w;
    const double cxx = (ws.sxx[e] - ws.sxx[s]) / w - mx * mx;
    const double cyy = (ws.syy[e] - ws.syy[s]) / w - my * my;
    const double cxy = (ws.sxy[e] - ws.sxy[s]) / w - mx * my;
    const double half = 0.5 * (cxx - cyy);
    const double lambda_min = 0.5 * (cxx + cyy) - std::sqrt(half * half + cxy * cxy);
    // Arc length of the run: samples s..e-1, so e-1-s segments.
    const double arc = ws.arc[e] - ws.arc[s + 1];
    ws.bound[s] = arc > 0.0 ? 2.0 * std::sqrt(std::max(lambda_min, 0.0)) / arc * (1.0 - 1e-9) : 0.0;
    ws.axis[s] = 0.5 * std::atan2(2.0 * cxy, cxx - cyy);  // principal axis
    ws.order[s] = s;
  }
  std::sort(ws.order.begin(), ws.order.end(), [&](std::size_t i, std::size_t j) {
    return ws.bound[i] < ws.bound[j] || (ws.bound[i] == ws.bound[j] && i < j);
  });
  Flattest best;
  best.ratio = std::numeric_limits<double>::infinity();
  for (const std::size_t s : ws.order) {
    if (ws.bound[s] > best.ratio) break;
    const double dx = std::cos(ws.axis[s]), dy = std::sin(ws.axis[s]);
    double along_min = std::numeric_limits<double>::infinity(), along_max = -along_min;
    double across_min = along_min, across_max = -along_min;
    const std::size_t e = s + window;
    bool beaten = false;
    for (std::size_t k = s; k < e; ++k) {
      const double along = ws.x[k] * dx + ws.y[k] * dy;
      const double across = ws.y[k] * dx - ws.x[k] * dy;
      along_min = std::min(along_min, along);
      along_max = std::max(along_max, along);
      across_min = std::min(across_min, across);
      across_max = std::max(across_max, across);
      // The band only grows, and the length grows by at most the arc still ahead: stop as soon
      // as this run cannot beat the best one.
      if ((k - s) % 16 == 15 &&
          across_max - across_min >
              best.ratio * (along_max - along_min + ws.arc[e] - ws.arc[k + 1])) {
        beaten = true;
        break;
      }
    }
    if (beaten) continue;
    const double length = along_max - along_min, band = across_max - across_min;
    const double ratio = length > 0.0 ? band / length : std::numeric_limits<double>::infinity();
    if (ratio < best.ratio || (ratio == best.ratio && s < best.start))
      best = {ratio, band, length, s};
  }
  return best;
}

inline Flattest flattest_part(const double* x, const double* y, std::size_t n, std::size_t window) {
  FlatWorkspace ws;
  return flattest_part(x, y, n, window, ws);
}

// Why a genome is infeasible: the `infeasible_reason` extra figure of the plugin.
enum Reason : int {
  kFeasible = 0,
  kNotGrashof = 1,        // s + l > p + q: no link turns fully
  kCrankNotShortest = 2,  // Grashof, but the input crank is not the shortest link
  kLoopOpen = 3,      // the loop fails to close at a sampled angle (rounding near s + l = p + q)
  kTransmission = 4,  // the transmission angle leaves [limit, 180 - limit] (rule enabled)
  kBadLength = 5      // a link length is not a positive finite number
};

struct Settings {
  Branch branch = Branch::open;
  std::size_t samples = 360;            // crank angles per revolution
  double transmission_limit_deg = 0.0;  // 0 = no rule; 40 = keep mu within [40, 140]
  bool straightness = false;            // also measure the flattest part of the path
  double straight_share = 0.25;         // share of the cycle the flattest part spans
};

struct Evaluation {
  int reason = kFeasible;
  double fitness = 0.0;     // 90 - max |mu - 90| over the cycle, degrees, in [0, 90]
  double width = 0.0;       // extent of the coupler path along the ground line
  double height = 0.0;      // extent across it
  double mu_min_deg = 0.0;  // smallest and largest transmission angle over the cycle
  double mu_max_deg = 0.0;
  Flattest flattest;  // only when settings.straightness
};

// Evaluates genomes under fixed settings; keeps the crank-angle table and the path buffers so
// that one evaluation allocates nothing.
class Evaluator {
 public:
  explicit Evaluator(const Settings& settings) : settings_(settings) {
    const std::size_t n = settings_.samples;
    cos2_.resize(n);
    sin2_.resize(n);
    for (std::size_t k = 0; k < n; ++k) {
      cos2_[k] = std::cos(sample_angle(k, n));
      sin2_[k] = std::sin(sample_angle(k, n));
    }
    if (settings_.straightness) {
      px_.resize(n);
      py_.resize(n);
    }
  }

  const Settings& settings() const { return settings_; }

  Evaluation evaluate(const double* genome) {
    const Dimensions m = Dimensions::from_genome(genome);
    Evaluation e;
    for (double v : {m.ground, m.crank, m.coupler, m.rocker}) {
      if (!(std::isfinite(v) && v > 0.0)) {
        e.reason = kBadLength;
        return e;
      }
    }
    if (!std::isfinite(m.point_distance) || !std::isfinite(m.point_angle_deg)) {
      e.reason = kBadLength;
      return e;
    }
    if (!is_grashof(m.ground, m.crank, m.coupler, m.rocker)) {
      e.reason = kNotGrashof;
      return e;
    }
    if (!crank_is_shortest(m)) {
      e.reason = kCrankNotShortest;
      return e;
    }
    const double g = m.point_angle_deg * kRadPerDeg;
    const double cg = std::cos(g), sg = std::sin(g);
    const std::size_t n = settings_.samples;
    double x_min = std::numeric_limits<double>::infinity(), x_max = -x_min;
    double y_min = x_min, y_max = x_max;
    double cos_mu_min = 1.0, cos_mu_max = -1.0;
    Pose pose;
    for (std::size_t k = 0; k < n; ++k) {
      if (!solve_pose(m, settings_.branch, cos2_[k], sin2_[k], cg, sg, pose)) {
        e.reason = kLoopOpen;
        return e;
      }
      x_min = std::min(x_min, pose.px);
      x_max = std::max(x_max, pose.px);
      y_min = std::min(y_min, pose.py);
      y_max = std::max(y_max, pose.py);
      cos_mu_min = std::min(cos_mu_min, pose.cos_mu);
      cos_mu_max = std::max(cos_mu_max, pose.cos_mu);
      if (settings_.straightness) {
        px_[k] = pose.px;
        py_[k] = pose.py;
      }
    }
    cos_mu_min = std::max(cos_mu_min, -1.0);
    cos_mu_max = std::min(cos_mu_max, 1.0);
    e.mu_min_deg = std::acos(cos_mu_max) / kRadPerDeg;
    e.mu_max_deg = std::acos(cos_mu_min) / kRadPerDeg;
    // |mu - 90| = asin|cos mu| for mu in [0, 180]: the worst sample has the largest |cos mu|.
    const double worst = std::max(std::abs(cos_mu_min), std::abs(cos_mu_max));
    e.fitness = 90.0 - std::asin(worst) / kRadPerDeg;
    e.width = x_max - x_min;
    e.height = y_max - y_min;
    if (settings_.straightness) {
      const auto window =
          static_cast<std::size_t>(std::lround(settings_.straight_share * static_cast<double>(n)));
      e.flattest = flattest_part(px_.data(), py_.data(), n, window, flat_);
    }
    if (settings_.transmission_limit_deg > 0.0 &&
        (e.mu_min_deg < settings_.transmission_limit_deg ||
         e.mu_max_deg > 180.0 - settings_.transmission_limit_deg))
      e.reason = kTransmission;
    return e;
  }

 private:
  Settings settings_;
  std::vector<double> cos2_, sin2_, px_, py_;
  FlatWorkspace flat_;
};

}  // namespace tessera::linkage
