// The shipped problems' math (plugins/*/..._model.hpp, the code the plugins run) against
// closed-form cases, hand-computed points and an independent numpy implementation.
#include <unistd.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <functional>
#include <numbers>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "arm/arm_model.hpp"
#include "projection/projection_model.hpp"

namespace {

constexpr double kPi = std::numbers::pi;

struct Arm {
  double fitness;
  double x;
  double y;
};

Arm arm(const std::vector<double>& theta) {
  Arm out{};
  double d[2];
  tessera::arm::evaluate(theta.data(), theta.size(), out.fitness, d);
  out.x = d[0];
  out.y = d[1];
  return out;
}

struct Projection {
  double fitness;
  double d1;
  double d2;
};

Projection project(tessera::projection::Kind kind, const std::vector<double>& x) {
  Projection out{};
  double d[2];
  const double f_max = tessera::projection::objective_max(kind, x.size());
  tessera::projection::evaluate(kind, x.data(), x.size(), f_max, out.fitness, d);
  out.d1 = d[0];
  out.d2 = d[1];
  return out;
}

using tessera::projection::Kind;

}  // namespace

TEST_CASE("arm forward kinematics matches closed-form postures", "[arm]") {
  // Planar serial arm: p = sum_i l_i (cos a_i, sin a_i), a_i = theta_1 + ... + theta_i (Craig,
  // Introduction to Robotics, planar manipulators); every link 1/n long (README.md, Shipped
  // problems).
  SECTION("all joints at zero: the arm lies along the x axis, tip at (1, 0)") {
    for (std::size_t n : {1u, 2u, 10u, 37u}) {
      const Arm a = arm(std::vector<double>(n, 0.0));
      CHECK(a.x == Approx(1.0).epsilon(1e-15));
      CHECK(a.y == Approx(0.0).margin(1e-15));
    }
  }
  SECTION("first joint at pi/2, others straight: tip at (0, 1)") {
    std::vector<double> theta(10, 0.0);
    theta[0] = kPi / 2;
    const Arm a = arm(theta);
    CHECK(a.x == Approx(0.0).margin(1e-12));
    CHECK(a.y == Approx(1.0).epsilon(1e-12));
  }
  SECTION("folded back at the base: tip at (-1, 0)") {
    const Arm a = arm({kPi, 0.0, 0.0});
    CHECK(a.x == Approx(-1.0).epsilon(1e-12));
    CHECK(a.y == Approx(0.0).margin(1e-12));
  }
  SECTION("two links with an elbow at pi/2: tip at (1/2, 1/2)") {
    const Arm a = arm({0.0, kPi / 2});
    CHECK(a.x == Approx(0.5).epsilon(1e-12));
    CHECK(a.y == Approx(0.5).epsilon(1e-12));
  }
  SECTION("closed polygons return to the base") {
    // Four right angles trace a square; three turns of 2pi/3 trace an equilateral triangle.
    const Arm square = arm({kPi / 2, kPi / 2, kPi / 2, kPi / 2});
    CHECK(square.x == Approx(0.0).margin(1e-12));
    CHECK(square.y == Approx(0.0).margin(1e-12));
    const Arm triangle = arm({0.0, 2 * kPi / 3, 2 * kPi / 3});
    CHECK(triangle.x == Approx(0.0).margin(1e-12));
    CHECK(triangle.y == Approx(0.0).margin(1e-12));
  }
  SECTION("two-link closed form x = l cos t1 + l cos(t1 + t2), y likewise (Craig)") {
    const double t1 = 0.3, t2 = -1.1, l = 0.5;
    const Arm a = arm({t1, t2});
    CHECK(a.x == Approx(l * std::cos(t1) + l * std::cos(t1 + t2)).epsilon(1e-14));
    CHECK(a.y == Approx(l * std::sin(t1) + l * std::sin(t1 + t2)).epsilon(1e-14));
  }
}

TEST_CASE("arm fitness is minus the population variance of the angles", "[arm]") {
  // Hand-computed: (1, 2, 3, 4) has mean 2.5 and squared deviations 2.25 + 0.25 + 0.25 + 2.25,
  // population variance 5 / 4.
  CHECK(arm({1.0, 2.0, 3.0, 4.0}).fitness == Approx(-1.25).epsilon(1e-15));
  // Equal angles have no spread.
  CHECK(arm(std::vector<double>(10, 0.7)).fitness == Approx(0.0).margin(1e-15));
  // Half at -pi, half at +pi: the largest variance in [-pi, pi]^n, pi^2 (the QD offset).
  const Arm extreme = arm({-kPi, kPi, -kPi, kPi});
  CHECK(extreme.fitness == Approx(-kPi * kPi).epsilon(1e-15));
  CHECK(tessera::arm::kFitnessLower == Approx(-kPi * kPi).epsilon(1e-15));
}

TEST_CASE("Rastrigin: minimum 0 at the optimum and f(1) = 1 in one dimension", "[projection]") {
  // Rastrigin 1974; Muehlenbein et al. 1991: f(x) = 10 n + sum(x_i^2 - 10 cos 2 pi x_i), global
  // minimum 0 at the (here shifted) optimum; in 1-D, f(1) = 10 + 1 - 10 cos 2pi = 1.
  std::vector<double> optimum(100, tessera::projection::kShift);
  CHECK(tessera::projection::rastrigin(optimum.data(), optimum.size()) ==
        Approx(0.0).margin(1e-12));
  const double one = 1.0 + tessera::projection::kShift;
  CHECK(tessera::projection::rastrigin(&one, 1) == Approx(1.0).epsilon(1e-12));
  // Any other point is worse.
  std::vector<double> nudged = optimum;
  nudged[17] += 0.01;
  CHECK(tessera::projection::rastrigin(nudged.data(), nudged.size()) > 0.0);
}

TEST_CASE("projection fitness on hand-computed points", "[projection]") {
  // Fitness 100 (f_max - f) / f_max, f_max at x = -5.12 (README.md, Shipped problems).
  const std::size_t n = 100;
  SECTION("optimum scores 100, the far corner 0") {
    for (Kind kind : {Kind::kSphere, Kind::kRastrigin}) {
      CHECK(project(kind, std::vector<double>(n, 2.048)).fitness == Approx(100.0).epsilon(1e-14));
      CHECK(project(kind, std::vector<double>(n, -5.12)).fitness == Approx(0.0).margin(1e-12));
    }
  }
  SECTION("sphere at the origin: 100 (1 - (2.048 / 7.168)^2) = 100 * 45 / 49") {
    // 7.168 = 5.12 + 2.048 = 3.5 * 2.048, so the ratio of squares is (2/7)^2 = 4/49.
    CHECK(project(Kind::kSphere, std::vector<double>(n, 0.0)).fitness ==
          Approx(100.0 * 45.0 / 49.0).epsilon(1e-13));
  }
  SECTION("rastrigin at the origin") {
    // Per parameter, hand-computed with python3 math: f(z = -2.048) = 4.64565855253357 and
    // f(z = -7.168) = 56.45295058451706; the ratio is the same for any n.
    const double expected = 100.0 * (56.45295058451706 - 4.64565855253357) / 56.45295058451706;
    CHECK(project(Kind::kRastrigin, std::vector<double>(n, 0.0)).fitness ==
          Approx(expected).epsilon(1e-12));
  }
  SECTION("points beyond the corner are clamped to 0") {
    CHECK(project(Kind::kSphere, std::vector<double>(n, -40.0)).fitness == 0.0);
  }
}

TEST_CASE("projection descriptors on hand-computed points", "[projection]") {
  // d1 = sum of c(x_i) over the first half, d2 over the second half; c(x) = x inside
  // [-5.12, 5.12] and 5.12 / x outside (Fontaine et al., GECCO 2020, from memory).
  SECTION("inside the bounds the descriptor is the plain sum of each half") {
    const Projection p = project(Kind::kSphere, {1.0, -2.0, 3.0, 5.0});
    CHECK(p.d1 == Approx(-1.0).epsilon(1e-15));
    CHECK(p.d2 == Approx(8.0).epsilon(1e-15));
  }
  SECTION("outside the bounds values fold back as 5.12 / x") {
    // c(10) = 0.512, c(0) = 0, c(-6.4) = -0.8, c(5.12) = 5.12 (on the bound: kept).
    const Projection p = project(Kind::kRastrigin, {10.0, 0.0, -6.4, 5.12});
    CHECK(p.d1 == Approx(0.512).epsilon(1e-15));
    CHECK(p.d2 == Approx(4.32).epsilon(1e-14));
  }
  SECTION("descriptor bounds are +-5.12 per term: [-256, 256] for 100 parameters") {
    CHECK(tessera::projection::descriptor_bound(100, 0) == Approx(256.0).epsilon(1e-15));
    CHECK(tessera::projection::descriptor_bound(100, 1) == Approx(256.0).epsilon(1e-15));
    const Projection top = project(Kind::kSphere, std::vector<double>(100, 5.12));
    CHECK(top.d1 == Approx(256.0).epsilon(1e-13));
    CHECK(top.d2 == Approx(256.0).epsilon(1e-13));
  }
}

TEST_CASE("models agree with an independent numpy implementation", "[numpy]") {
  // tests/reference/shipped_problems.py implements the README's shipped problems with numpy (Debian
  // python3-numpy).
  namespace fs = std::filesystem;
  const fs::path dir = fs::temp_directory_path() / ("tessera-ref-" + std::to_string(getpid()));
  fs::create_directories(dir);
  std::mt19937_64 rng(20240611);
  struct Case {
    std::string problem;
    std::size_t n;
    double lower, upper;
  };
  for (const Case& c : {Case{"arm", 10, -kPi, kPi}, Case{"sphere-proj", 100, -5.12, 5.12},
                        Case{"rastrigin-proj", 100, -5.12, 5.12}}) {
    // Projections also get points beyond the bounds, where the clipping rule applies.
    const double widen = c.problem == "arm" ? 1.0 : 2.0;
    std::uniform_real_distribution<double> uniform(c.lower * widen, c.upper * widen);
    std::vector<std::vector<double>> genomes(50, std::vector<double>(c.n));
    const fs::path file = dir / (c.problem + ".txt");
    {
      std::ofstream out(file);
      out.precision(17);
      for (auto& g : genomes) {
        for (double& v : g) {
          v = uniform(rng);
          out << v << ' ';
        }
        out << '\n';
      }
    }
    const std::string command = "/usr/bin/python3 " TESSERA_SOURCE_DIR
                                "/tests/reference/shipped_problems.py " +
                                c.problem + " " + file.string();
    FILE* pipe = popen(command.c_str(), "r");
    REQUIRE(pipe != nullptr);
    std::string text;
    char buffer[4096];
    while (std::fgets(buffer, sizeof buffer, pipe) != nullptr) text += buffer;
    REQUIRE(pclose(pipe) == 0);
    std::istringstream lines(text);
    for (const auto& g : genomes) {
      double fitness = 0, d1 = 0, d2 = 0;
      REQUIRE(lines >> fitness >> d1 >> d2);
      double f = 0, d[2];
      if (c.problem == "arm") {
        tessera::arm::evaluate(g.data(), g.size(), f, d);
      } else {
        const Kind kind = c.problem == "sphere-proj" ? Kind::kSphere : Kind::kRastrigin;
        tessera::projection::evaluate(kind, g.data(), g.size(),
                                      tessera::projection::objective_max(kind, g.size()), f, d);
      }
      INFO(c.problem);
      // Summation order differs from numpy's pairwise sums: agree to rounding, not bits.
      CHECK(f == Approx(fitness).epsilon(1e-12).margin(1e-12));
      CHECK(d[0] == Approx(d1).epsilon(1e-12).margin(1e-12));
      CHECK(d[1] == Approx(d2).epsilon(1e-12).margin(1e-12));
    }
  }
  fs::remove_all(dir);
}

namespace {

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0;
}

}  // namespace

TEST_CASE("arm batch kernel agrees with the scalar formula to rounding", "[kernels]") {
  // The README's definition evaluated with std::sin / std::cos one joint at a time. glibc's
  // vector sine and cosine (libmvec) are within 4 ulp of the exact values (glibc manual, "Errors
  // in Math Functions"); over n links of length 1/n the end effector moves by less than 1e-15.
  std::mt19937_64 rng(11);
  for (const std::size_t n : {1u, 3u, 10u, 40u}) {
    std::uniform_real_distribution<double> uniform(-kPi, kPi);
    const std::size_t count = 999;
    std::vector<double> genomes(count * n), fitness(count), descriptors(2 * count);
    for (double& v : genomes) v = uniform(rng);
    tessera::arm::evaluate_batch(genomes.data(), count, n, {}, fitness.data(), descriptors.data());
    double worst = 0.0;
    for (std::size_t k = 0; k < count; ++k) {
      const double* theta = genomes.data() + k * n;
      double angle = 0.0, x = 0.0, y = 0.0, sum = 0.0, squares = 0.0;
      for (std::size_t i = 0; i < n; ++i) {
        angle += theta[i];
        x += std::cos(angle) / static_cast<double>(n);
        y += std::sin(angle) / static_cast<double>(n);
        sum += theta[i];
      }
      const double mean = sum / static_cast<double>(n);
      for (std::size_t i = 0; i < n; ++i) squares += (theta[i] - mean) * (theta[i] - mean);
      CHECK(fitness[k] == -squares / static_cast<double>(n));  // no sine or cosine: exact
      worst = std::max(
          {worst, std::fabs(descriptors[2 * k] - x), std::fabs(descriptors[2 * k + 1] - y)});
    }
    INFO(n << " joints");
    CHECK(worst <= 1e-15);
  }
}

TEST_CASE("projection batch kernels agree with the scalar formulas to rounding", "[kernels]") {
  // Rastrigin's 10 cos(2 pi z) terms carry libmvec's error (within 4 ulp, glibc manual): the
  // objective agrees to 1e-15 of the sum of its terms' magnitudes; sphere has no cosine: exact.
  std::mt19937_64 rng(12);
  std::uniform_real_distribution<double> uniform(-2 * 5.12, 2 * 5.12);
  const std::size_t n = 100, count = 501;
  std::vector<double> genomes(count * n);
  for (double& v : genomes) v = uniform(rng);
  for (const Kind kind : {Kind::kSphere, Kind::kRastrigin}) {
    for (std::size_t k = 0; k < count; ++k) {
      const double* x = genomes.data() + k * n;
      double f = kind == Kind::kSphere ? 0.0 : 10.0 * static_cast<double>(n), magnitude = f;
      for (std::size_t i = 0; i < n; ++i) {
        const double z = x[i] - 2.048;
        const double term = kind == Kind::kSphere ? z * z : z * z - 10.0 * std::cos(2.0 * kPi * z);
        f += term;
        magnitude += z * z + (kind == Kind::kSphere ? 0.0 : 10.0);
      }
      const double got = tessera::projection::objective(kind, x, n);
      if (kind == Kind::kSphere)
        CHECK(got == f);
      else
        CHECK(std::fabs(got - f) <= 1e-15 * magnitude);
    }
  }
}

TEST_CASE("a genome gives the same bits in any lane and chunk of a batch", "[kernels]") {
  // Odd and even counts, shifted by one genome so that each lands in the other lane, and alone
  // (paired with itself): every result bit-identical.
  std::mt19937_64 rng(13);
  tessera::arm::ArmDamage stuck;
  stuck.stuck_joint = 3;
  stuck.stuck_angle = 0.4;
  tessera::arm::ArmDamage reach = stuck;
  reach.has_target = true;
  reach.target_x = 0.3;
  reach.target_y = -0.2;
  struct Case {
    const char* name;
    std::size_t n;
    double bound;
    std::function<void(const double*, std::size_t, double*, double*)> batch;
  };
  const auto arm_case = [](tessera::arm::ArmDamage d) {
    return [d](const double* g, std::size_t c, double* f, double* desc) {
      tessera::arm::evaluate_batch(g, c, 10, d, f, desc);
    };
  };
  const auto projection_case = [](Kind kind) {
    return [kind](const double* g, std::size_t c, double* f, double* desc) {
      tessera::projection::evaluate_batch(kind, g, c, 100,
                                          tessera::projection::objective_max(kind, 100), f, desc);
    };
  };
  const std::vector<Case> cases = {
      {"arm", 10, kPi, arm_case({})},
      {"arm, stuck joint", 10, kPi, arm_case(stuck)},
      {"arm, stuck joint and target", 10, kPi, arm_case(reach)},
      {"sphere-proj", 100, 10.24, projection_case(Kind::kSphere)},
      {"rastrigin-proj", 100, 10.24, projection_case(Kind::kRastrigin)}};
  for (const Case& c : cases) {
    INFO(c.name);
    std::uniform_real_distribution<double> uniform(-c.bound, c.bound);
    const std::size_t count = 37;
    std::vector<double> genomes((count + 1) * c.n);
    for (double& v : genomes) v = uniform(rng);
    std::vector<double> f_all(count + 1), d_all(2 * (count + 1));
    c.batch(genomes.data(), count + 1, f_all.data(), d_all.data());
    std::vector<double> f_shift(count), d_shift(2 * count);
    c.batch(genomes.data() + c.n, count, f_shift.data(), d_shift.data());
    CHECK(same_bits({f_all.begin() + 1, f_all.end()}, f_shift));
    CHECK(same_bits({d_all.begin() + 2, d_all.end()}, d_shift));
    std::vector<double> f_one(count + 1), d_one(2 * (count + 1));
    for (std::size_t k = 0; k <= count; ++k)
      c.batch(genomes.data() + k * c.n, 1, &f_one[k], &d_one[2 * k]);
    CHECK(same_bits(f_all, f_one));
    CHECK(same_bits(d_all, d_one));
  }
}
