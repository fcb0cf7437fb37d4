// The four-bar kinematics of the `linkage` problem (plugins/linkage/linkage_model.hpp) against
// textbook facts: Grashof's rule, Freudenstein's equation, the law-of-cosines transmission
// angle, hand-solved positions of Hoeken's straight-line linkage, and the 40..140 degree rule.
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "linkage/linkage_model.hpp"

namespace lk = tessera::linkage;

namespace {

constexpr double kDeg = lk::kRadPerDeg;

lk::Dimensions dims(double ground, double crank, double coupler, double rocker, double p = 0.0,
                    double gamma_deg = 0.0) {
  return {ground, crank, coupler, rocker, p, gamma_deg};
}

std::vector<double> genome_of(const lk::Dimensions& m) {
  return {m.ground, m.crank, m.coupler, m.rocker, m.point_distance, m.point_angle_deg};
}

// Whether the loop closes at every one of n crank angles (the crank can turn fully).
bool closes_everywhere(const lk::Dimensions& m, std::size_t n = 720) {
  return !lk::trace(m, lk::Branch::open, n).empty();
}

// Rocker angle theta4 from the pose: the direction of O4->B, O4 = (d, 0).
double theta4(const lk::Dimensions& m, const lk::Pose& p) {
  return std::atan2(p.by, p.bx - m.ground);
}

// Crank-rocker linkages of various proportions (Grashof, crank shortest): the cases the
// kinematic identities below are checked on, in both assembly branches.
const std::vector<lk::Dimensions>& crank_rockers() {
  static const std::vector<lk::Dimensions> list = {
      dims(4.0, 1.0, 3.0, 3.5, 2.0, 30.0), dims(2.0, 1.0, 2.5, 2.5, 5.0, 0.0),
      dims(100.0, 25.0, 80.0, 60.0, 50.0, -75.0), dims(7.0, 2.0, 9.0, 6.0, 3.0, 160.0),
      dims(50.0, 12.0, 45.0, 30.0, 0.0, 0.0)};
  return list;
}

}  // namespace

// Grashof's rule and the classes it yields, on hand-made link sets. Rule and class names as in
// Norton, Design of Machinery, sec. 2.12 (s + l <= p + q; shortest link as crank -> crank-rocker,
// as ground -> double crank, as coupler -> double rocker; s + l = p + q -> change point;
// s + l > p + q -> triple rocker); Shigley & Uicker, Theory of Machines and Mechanisms, ch. 1
// states the same law.
TEST_CASE("Grashof's rule classifies hand-made four-bars", "[linkage][grashof]") {
  // (ground, crank, coupler, rocker)
  // s=1, l=4: 5 <= 3 + 3.5, shortest is the crank.
  CHECK(lk::is_grashof(4, 1, 3, 3.5));
  CHECK(lk::classify(4, 1, 3, 3.5) == lk::LinkageClass::crank_rocker);
  // Same lengths, the 1 moved to the ground: drag link.
  CHECK(lk::classify(1, 4, 3, 3.5) == lk::LinkageClass::double_crank);
  // ... to the coupler: Grashof double rocker.
  CHECK(lk::classify(4, 3, 1, 3.5) == lk::LinkageClass::grashof_double_rocker);
  // ... to the rocker: crank-rocker driven from the other side.
  CHECK(lk::classify(4, 3.5, 3, 1) == lk::LinkageClass::rocker_crank);
  // s=2, l=5: 7 > 3 + 3.5: non-Grashof.
  CHECK_FALSE(lk::is_grashof(5, 2, 3, 3.5));
  CHECK(lk::classify(5, 2, 3, 3.5) == lk::LinkageClass::triple_rocker);
  // s=1, l=4: 5 = 3 + 2: change point (parallelogram-like special Grashof).
  CHECK(lk::is_grashof(4, 1, 3, 2));
  CHECK(lk::classify(4, 1, 3, 2) == lk::LinkageClass::change_point);
  CHECK(lk::classify(2, 1, 2, 1) == lk::LinkageClass::change_point);  // parallelogram
  // Just past equality either way.
  CHECK(lk::is_grashof(4, 1, 3, 2.01));
  CHECK_FALSE(lk::is_grashof(4, 1, 3, 1.99));
}

TEST_CASE("only the Grashof crank-rocker lets the crank turn fully and the rocker rock",
          "[linkage][grashof]") {
  // The position analysis must agree with the class: the crank turns fully exactly when the
  // shortest link is the crank or the ground (Grashof's theorem, Norton sec. 2.12).
  CHECK(closes_everywhere(dims(4, 1, 3, 3.5)));        // crank-rocker
  CHECK(closes_everywhere(dims(1, 4, 3, 3.5)));        // double crank: the crank turns too
  CHECK_FALSE(closes_everywhere(dims(4, 3, 1, 3.5)));  // double rocker
  CHECK_FALSE(closes_everywhere(dims(4, 3.5, 3, 1)));  // rocker-crank: our crank only rocks
  CHECK_FALSE(closes_everywhere(dims(5, 2, 3, 3.5)));  // triple rocker

  // In the crank-rocker the rocker oscillates (its angle stays within a half turn); in the
  // double crank it turns through every direction.
  const auto swing = [](const lk::Dimensions& m) {
    const auto poses = lk::trace(m, lk::Branch::open, 720);
    double lo = 10, hi = -10;
    for (const auto& p : poses) {
      const double t = std::atan2(p.by - 0.0, p.bx - m.ground);
      lo = std::min(lo, t);
      hi = std::max(hi, t);
    }
    return hi - lo;
  };
  CHECK(swing(dims(4, 1, 3, 3.5)) < lk::kPi);
  CHECK(swing(dims(1, 4, 3, 3.5)) > 1.9 * lk::kPi);

  // The feasibility check of the problem (crank-rocker only) gives the documented reasons.
  lk::Evaluator ev({});
  const auto reason = [&](const lk::Dimensions& m) {
    return ev.evaluate(genome_of(m).data()).reason;
  };
  CHECK(reason(dims(4, 1, 3, 3.5)) == lk::kFeasible);
  CHECK(reason(dims(5, 2, 3, 3.5)) == lk::kNotGrashof);
  CHECK(reason(dims(1, 4, 3, 3.5)) == lk::kCrankNotShortest);
  CHECK(reason(dims(4, 3, 1, 3.5)) == lk::kCrankNotShortest);
  CHECK(reason(dims(4, 3.5, 3, 1)) == lk::kCrankNotShortest);
  CHECK(reason(dims(4, 0.0, 3, 3.5)) == lk::kBadLength);
  CHECK(reason(dims(4, -1, 3, 3.5)) == lk::kBadLength);
  CHECK(reason(dims(std::numeric_limits<double>::quiet_NaN(), 1, 3, 3.5)) == lk::kBadLength);
}

TEST_CASE("a pose whose circles do not meet is reported as an open loop", "[linkage]") {
  // Triple rocker 5, 2, 3, 3.5 with the crank pointing away from O4: the diagonal f = 7 exceeds
  // b + c = 6.5, so B cannot be placed.
  lk::Pose pose;
  CHECK_FALSE(lk::solve_pose(dims(5, 2, 3, 3.5), lk::Branch::open, -1.0, 0.0, 1.0, 0.0, pose));
  // Pointing towards O4 the diagonal is 3, inside [|b - c|, b + c]: it closes.
  CHECK(lk::solve_pose(dims(5, 2, 3, 3.5), lk::Branch::open, 1.0, 0.0, 1.0, 0.0, pose));
}

// Freudenstein's equation (F. Freudenstein, "Approximate synthesis of four-bar linkages",
// Trans. ASME 77, 1955): K1 cos(theta4) - K2 cos(theta2) + K3 = cos(theta2 - theta4), with
// K1 = d/a, K2 = d/c, K3 = (a^2 - b^2 + c^2 + d^2) / (2 a c); angles from the ground line.
TEST_CASE("the position analysis satisfies Freudenstein's equation at every sample",
          "[linkage][freudenstein]") {
  for (const auto branch : {lk::Branch::open, lk::Branch::crossed}) {
    for (const auto& m : crank_rockers()) {
      const double a = m.crank, b = m.coupler, c = m.rocker, d = m.ground;
      const double k1 = d / a, k2 = d / c, k3 = (a * a - b * b + c * c + d * d) / (2 * a * c);
      const auto poses = lk::trace(m, branch, 360);
      REQUIRE(poses.size() == 360);
      double worst = 0.0, worst_length = 0.0;
      for (const auto& p : poses) {
        const double t2 = p.crank_angle, t4 = theta4(m, p);
        worst = std::max(worst,
                         std::abs(k1 * std::cos(t4) - k2 * std::cos(t2) + k3 - std::cos(t2 - t4)));
        // The links keep their lengths, and P keeps its place on the coupler.
        worst_length =
            std::max({worst_length, std::abs(std::hypot(p.ax, p.ay) - a) / a,
                      std::abs(std::hypot(p.bx - p.ax, p.by - p.ay) - b) / b,
                      std::abs(std::hypot(p.bx - d, p.by) - c) / c,
                      m.point_distance > 0
                          ? std::abs(std::hypot(p.px - p.ax, p.py - p.ay) - m.point_distance) /
                                m.point_distance
                          : std::hypot(p.px - p.ax, p.py - p.ay)});
      }
      INFO("d=" << d << " a=" << a << " b=" << b << " c=" << c);
      CHECK(worst < 1e-12);
      CHECK(worst_length < 1e-12);
    }
  }
}

TEST_CASE("the branches are mirror images across the diagonal O4-A", "[linkage][branch]") {
  // Both assemblies put B at distance c from O4 and b from A, so the crossed B is the open B
  // reflected in the line through O4 and A (two circles meet symmetrically about their centre
  // line). At theta2 = 90 deg the open circuit has B above the ground (Norton's convex "open"
  // configuration).
  const auto m = dims(4, 1, 3, 3.5);
  const auto open = lk::trace(m, lk::Branch::open, 72);
  const auto crossed = lk::trace(m, lk::Branch::crossed, 72);
  REQUIRE(open.size() == 72);
  REQUIRE(crossed.size() == 72);
  for (std::size_t k = 0; k < 72; ++k) {
    const double ux = open[k].ax - m.ground, uy = open[k].ay;
    const double len = std::hypot(ux, uy);
    const double nx = -uy / len, ny = ux / len;  // normal of the diagonal
    const double s_open = (open[k].bx - m.ground) * nx + open[k].by * ny;
    const double s_crossed = (crossed[k].bx - m.ground) * nx + crossed[k].by * ny;
    CHECK(s_open == Approx(-s_crossed).margin(1e-12));
    CHECK(s_open < 0.0);  // open: B on the clockwise side of O4->A, throughout the cycle
  }
  CHECK(open[18].by > 0.0);  // theta2 = 90 deg
  CHECK(crossed[18].by < 0.0);
}

// Transmission angle mu between coupler and rocker by the law of cosines in triangle A-B-O4:
// cos mu = (b^2 + c^2 - f^2) / (2 b c) with the diagonal f^2 = a^2 + d^2 - 2 a d cos(theta2)
// (Norton, Design of Machinery, sec. 4.10; Shigley & Uicker ch. 1).
TEST_CASE("the transmission angle equals the law-of-cosines formula", "[linkage][transmission]") {
  for (const auto branch : {lk::Branch::open, lk::Branch::crossed}) {
    for (const auto& m : crank_rockers()) {
      const double a = m.crank, b = m.coupler, c = m.rocker, d = m.ground;
      lk::Settings settings;
      settings.branch = branch;
      lk::Evaluator ev(settings);
      const auto e = ev.evaluate(genome_of(m).data());
      REQUIRE(e.reason == lk::kFeasible);
      double worst_dev = 0.0, mu_lo = 180, mu_hi = 0, err = 0.0;
      for (const auto& p : lk::trace(m, branch, 360)) {
        const double f2 = a * a + d * d - 2 * a * d * std::cos(p.crank_angle);
        const double mu = std::acos((b * b + c * c - f2) / (2 * b * c)) / kDeg;
        err = std::max(err, std::abs(p.transmission_angle_deg() - mu));
        worst_dev = std::max(worst_dev, std::abs(mu - 90.0));
        mu_lo = std::min(mu_lo, mu);
        mu_hi = std::max(mu_hi, mu);
      }
      CHECK(err < 1e-6);
      CHECK(e.fitness == Approx(90.0 - worst_dev).margin(1e-6));
      CHECK(e.mu_min_deg == Approx(mu_lo).margin(1e-6));
      CHECK(e.mu_max_deg == Approx(mu_hi).margin(1e-6));
      // The extremes occur with crank and ground collinear (theta2 = 0 and 180 deg, both
      // sampled): f = d - a and d + a (Norton sec. 4.10).
      CHECK(
          e.mu_min_deg ==
          Approx(std::acos((b * b + c * c - (d - a) * (d - a)) / (2 * b * c)) / kDeg).margin(1e-6));
      CHECK(
          e.mu_max_deg ==
          Approx(std::acos((b * b + c * c - (d + a) * (d + a)) / (2 * b * c)) / kDeg).margin(1e-6));
      CHECK(e.fitness >= 0.0);
      CHECK(e.fitness <= 90.0);
    }
  }
}

// The common design rule keeps the transmission angle within 40..140 degrees (common practice;
// Norton sec. 4.10 recommends a minimum of about 40 degrees). As a feasibility constraint it
// rejects exactly the linkages whose extremes leave that range.
TEST_CASE("the 40..140 degree transmission rule works as a constraint", "[linkage][transmission]") {
  lk::Settings with_rule;
  with_rule.transmission_limit_deg = 40.0;
  lk::Evaluator ruled(with_rule);
  lk::Evaluator free({});
  // d=4, a=1, b=3, c=3.5: mu from acos((9 + 12.25 - 9)/21) = 54.3 to acos((9 + 12.25 - 25)/21)
  // = 100.3 degrees: inside the rule.
  const auto good = genome_of(dims(4, 1, 3, 3.5));
  CHECK(ruled.evaluate(good.data()).reason == lk::kFeasible);
  // d=4, a=1.8, b=3, c=3.5: mu up to acos((9 + 12.25 - 33.64)/21) = 126.2, down to
  // acos((9 + 12.25 - 4.84)/21) = 38.6 degrees: the minimum breaks the rule.
  const auto low = genome_of(dims(4, 1.8, 3, 3.5));
  CHECK(free.evaluate(low.data()).reason == lk::kFeasible);
  const auto low_e = ruled.evaluate(low.data());
  CHECK(low_e.reason == lk::kTransmission);
  CHECK(low_e.mu_min_deg == Approx(38.6).margin(0.1));
  // d=5, a=1.8, b=4, c=3.2: mu from acos((26.24 - 10.24)/25.6) = 51.3 up to
  // acos((26.24 - 46.24)/25.6) = 141.4 degrees: the maximum breaks the rule.
  const auto high = genome_of(dims(5, 1.8, 4, 3.2));
  CHECK(free.evaluate(high.data()).reason == lk::kFeasible);
  const auto high_e = ruled.evaluate(high.data());
  CHECK(high_e.reason == lk::kTransmission);
  CHECK(high_e.mu_max_deg == Approx(141.4).margin(0.1));
  CHECK(high_e.mu_min_deg == Approx(51.3).margin(0.1));
  // Every random genome the rule keeps has fitness >= 40, and every one it refuses, < 40.
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> len(1.0, 10.0), angle(-180, 180);
  int kept = 0, refused = 0;
  for (int i = 0; i < 20000; ++i) {
    const std::vector<double> g = {len(rng), len(rng), len(rng), len(rng), len(rng), angle(rng)};
    const auto f = free.evaluate(g.data());
    const auto r = ruled.evaluate(g.data());
    if (f.reason != lk::kFeasible) {
      CHECK(r.reason == f.reason);
      continue;
    }
    if (f.fitness >= 40.0) {
      CHECK(r.reason == lk::kFeasible);
      ++kept;
    } else {
      CHECK(r.reason == lk::kTransmission);
      ++refused;
    }
  }
  CHECK(kept > 100);
  CHECK(refused > 100);
}

TEST_CASE("the descriptor is the size of the coupler path in the ground frame", "[linkage]") {
  // P at the crank pin (p = 0) traces the crank circle: width = height = 2a when the samples
  // include the four axis directions.
  lk::Evaluator ev({});
  const auto circle = ev.evaluate(genome_of(dims(100, 25, 80, 60, 0.0, 0.0)).data());
  REQUIRE(circle.reason == lk::kFeasible);
  CHECK(circle.width == Approx(50.0).epsilon(1e-12));
  CHECK(circle.height == Approx(50.0).epsilon(1e-12));
  // Scaling every length scales the path and keeps the angles: the model is unit-free.
  const auto small = ev.evaluate(genome_of(dims(4, 1, 3, 3.5, 2, 30)).data());
  const auto big = ev.evaluate(genome_of(dims(400, 100, 300, 350, 200, 30)).data());
  CHECK(big.width == Approx(100 * small.width).epsilon(1e-12));
  CHECK(big.height == Approx(100 * small.height).epsilon(1e-12));
  CHECK(big.fitness == Approx(small.fitness).epsilon(1e-12));
}

// Hoeken's straight-line linkage, proportions from memory (as drawn among the straight-line
// mechanisms of Norton, Design of Machinery, ch. 3): ground 2, crank 1, coupler 2.5, rocker 2.5,
// coupler point on the coupler line 5 from the crank pin (twice the coupler). Known behaviour
// (from memory): over about half the crank revolution the point runs along a nearly straight line
// of about 4 crank lengths, parallel to the ground, straight to a fraction of a percent.
// Hand solution of three points on that line: theta2 = 90 deg: A = (0, 1), B = (2, 2.5)
// (|AB| = |O4B| = 2.5), P = 2B - A = (4, 4); theta2 = 180 deg: A = (-1, 0), B = (0.5, 2),
// P = (2, 4); theta2 = 270 deg: A = (0, -1), B = (0, 1.5), P = (0, 4).
TEST_CASE("Hoeken's linkage traces its straight line", "[linkage][straight]") {
  const auto m = dims(2.0, 1.0, 2.5, 2.5, 5.0, 0.0);
  const auto poses = lk::trace(m, lk::Branch::open, 360);
  REQUIRE(poses.size() == 360);
  CHECK(poses[90].px == Approx(4.0).margin(1e-12));
  CHECK(poses[90].py == Approx(4.0).margin(1e-12));
  CHECK(poses[180].px == Approx(2.0).margin(1e-12));
  CHECK(poses[180].py == Approx(4.0).margin(1e-12));
  CHECK(poses[270].px == Approx(0.0).margin(1e-12));
  CHECK(poses[270].py == Approx(4.0).margin(1e-12));

  lk::Settings settings;
  settings.straightness = true;
  settings.straight_share = 0.5;
  lk::Evaluator ev(settings);
  const auto e = ev.evaluate(genome_of(m).data());
  REQUIRE(e.reason == lk::kFeasible);
  // The flattest half cycle is the one from about 90 to 270 degrees of crank angle...
  CHECK(e.flattest.start >= 80);
  CHECK(e.flattest.start <= 100);
  // ... about 4 crank lengths long, within half a percent of a straight line.
  CHECK(e.flattest.length == Approx(4.0).epsilon(0.02));
  CHECK(e.flattest.ratio < 0.005);
  CHECK(e.flattest.band == Approx(e.flattest.ratio * e.flattest.length).epsilon(1e-12));
  // Every point of that half stays within the band of the line y = 4.
  for (std::size_t k = 90; k <= 270; ++k) CHECK(std::abs(poses[k].py - 4.0) <= e.flattest.band);

  // A generic crank-rocker point (not a straight-line mechanism) is nowhere near as straight.
  const auto curvy = ev.evaluate(genome_of(dims(4, 1, 3, 3.5, 2, 30)).data());
  REQUIRE(curvy.reason == lk::kFeasible);
  CHECK(curvy.flattest.ratio > 0.05);
}

TEST_CASE("the flattest part is the exact minimum over every run", "[linkage][straight]") {
  // Reference: every run of the window, its principal-axis line and band, computed directly
  // (two passes, no pruning).
  const auto brute = [](const std::vector<double>& x, const std::vector<double>& y, std::size_t w) {
    const std::size_t n = x.size();
    double best = std::numeric_limits<double>::infinity();
    for (std::size_t s = 0; s < n; ++s) {
      double mx = 0, my = 0;
      for (std::size_t j = 0; j < w; ++j) {
        mx += x[(s + j) % n];
        my += y[(s + j) % n];
      }
      mx /= static_cast<double>(w);
      my /= static_cast<double>(w);
      double cxx = 0, cyy = 0, cxy = 0;
      for (std::size_t j = 0; j < w; ++j) {
        const double u = x[(s + j) % n] - mx, v = y[(s + j) % n] - my;
        cxx += u * u;
        cyy += v * v;
        cxy += u * v;
      }
      const double t = 0.5 * std::atan2(2 * cxy, cxx - cyy);
      double a0 = 1e300, a1 = -1e300, c0 = 1e300, c1 = -1e300;
      for (std::size_t j = 0; j < w; ++j) {
        const double u = x[(s + j) % n], v = y[(s + j) % n];
        const double along = u * std::cos(t) + v * std::sin(t);
        const double across = -u * std::sin(t) + v * std::cos(t);
        a0 = std::min(a0, along);
        a1 = std::max(a1, along);
        c0 = std::min(c0, across);
        c1 = std::max(c1, across);
      }
      best = std::min(best, (c1 - c0) / (a1 - a0));
    }
    return best;
  };
  std::mt19937_64 rng(11);
  std::uniform_real_distribution<double> len(1.0, 10.0), angle(-180, 180);
  int checked = 0;
  lk::Evaluator ev({});
  while (checked < 40) {
    const auto m = dims(len(rng), len(rng), len(rng), len(rng), len(rng), angle(rng));
    if (ev.evaluate(genome_of(m).data()).reason != lk::kFeasible) continue;
    const auto poses = lk::trace(m, lk::Branch::open, 180);
    std::vector<double> x, y;
    for (const auto& p : poses) {
      x.push_back(p.px);
      y.push_back(p.py);
    }
    for (std::size_t w : {std::size_t{3}, std::size_t{45}, std::size_t{90}, std::size_t{180}}) {
      const auto fast = lk::flattest_part(x.data(), y.data(), x.size(), w);
      // Prefix-sum moments round differently from the direct sums: agreement to 1e-9 (relative,
      // or absolute for the nearly straight three-point runs).
      INFO("window " << w);
      CHECK(fast.ratio == Approx(brute(x, y, w)).epsilon(1e-9).margin(1e-9));
    }
    ++checked;
  }
}
