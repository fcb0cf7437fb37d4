// Plugin ABI version 2 figures: a version 1 plugin (built against a copy of the old header) still
// loads and evaluates and gives no figures; the shipped plugins' scenes and traces agree with the
// physics they draw (closed forms written out here, independent of the plugins' code); a plugin
// without the optional exports gives none.
#include <stdlib.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "core/base/types.hpp"
#include "problems/plugin_problem.hpp"
#include "problems/registry.hpp"

namespace {

using namespace tessera;

const std::string kPluginDir = TESSERA_PLUGIN_DIR;
const std::string kTestPluginDir = TESSERA_TEST_PLUGIN_DIR;

const FigureItem& item_named(const Figure& figure, const std::string& name) {
  for (const auto& item : figure.items)
    if (item.name == name) return item;
  FAIL("no item named '" << name << "'");
  throw std::logic_error("unreachable");
}

// Evaluates one genome through the plugin, as the engine does.
void evaluate_one(const Problem& problem, const std::vector<double>& genome, double& fitness,
                  std::vector<double>& descriptor) {
  const auto& info = problem.info();
  Batch batch;
  batch.resize(1, info.genome_size(), info.descriptor_size(), info.extra_names.size());
  std::copy(genome.begin(), genome.end(), batch.genomes.begin());
  problem.make_instance()->evaluate(batch, 0, 1);
  REQUIRE(batch.valid[0] == 1);
  fitness = batch.fitness[0];
  descriptor.assign(batch.descriptors.begin(), batch.descriptors.end());
}

}  // namespace

TEST_CASE("a version 1 plugin still loads, evaluates and gives no figures", "[plugins]") {
  const auto problem = load_plugin_problem(kTestPluginDir + "/tessera-plugin-legacy-v1.so", "");
  CHECK(problem->info().abi_version == 1);
  CHECK(problem->info().extra_names == std::vector<std::string>{"radius"});
  // The fixture's function, -(x^2 + y^2) with descriptor (x, y) and extra sqrt(x^2 + y^2).
  Batch batch;
  batch.resize(3, 2, 2, 1);
  batch.genomes = {0.6, 0.8, -1.0, 0.0, 0.25, -0.5};
  problem->make_instance()->evaluate(batch, 0, 3);
  CHECK(batch.fitness == std::vector<double>{-1.0, -1.0, -(0.0625 + 0.25)});
  CHECK(batch.descriptors == batch.genomes);
  CHECK(batch.extras[0] == Approx(1.0).epsilon(1e-15));
  CHECK_FALSE(problem->scene());
  CHECK_FALSE(problem->trace({0.1, 0.2}));
}

TEST_CASE("a version 2 plugin without the optional exports gives no figures", "[plugins]") {
  setenv("TESSERA_PLUGIN_PATH", kPluginDir.c_str(), 1);
  const auto problem = open_plugin_problem("sphere-proj", "");
  CHECK(problem->info().abi_version == 2);
  CHECK_FALSE(problem->scene());
  CHECK_FALSE(problem->trace(std::vector<double>(100, 0.0)));
}

TEST_CASE("the arm's trace is its posture and ends at the evaluated descriptor", "[plugins]") {
  setenv("TESSERA_PLUGIN_PATH", kPluginDir.c_str(), 1);
  const std::size_t n = 12;
  const auto problem = open_plugin_problem("arm", "joints = 12");
  const auto scene = problem->scene();
  REQUIRE(scene);
  const FigureItem& base = item_named(*scene, "base");
  CHECK(base.style == FigureStyle::anchor);
  CHECK(base.values == std::vector<double>{0.0, 0.0});
  std::mt19937_64 rng(3);
  std::uniform_real_distribution<double> angle(-std::numbers::pi, std::numbers::pi);
  for (int trial = 0; trial < 20; ++trial) {
    std::vector<double> genome(n);
    for (double& g : genome) g = angle(rng);
    double fitness;
    std::vector<double> descriptor;
    evaluate_one(*problem, genome, fitness, descriptor);
    const auto trace = problem->trace(genome);
    REQUIRE(trace);
    const FigureItem& joints = item_named(*trace, "joints");
    REQUIRE(joints.rows() == n + 1);
    // Forward kinematics (planar serial chain, links 1/n): joint k at the sum of the first k
    // link vectors, each at the sum of the angles so far.
    double x = 0.0, y = 0.0, a = 0.0;
    for (std::size_t k = 0; k <= n; ++k) {
      INFO("joint " << k);
      CHECK(joints.at(k, 0) == static_cast<double>(k));
      CHECK(joints.at(k, 1) == Approx(x).margin(1e-13));
      CHECK(joints.at(k, 2) == Approx(y).margin(1e-13));
      if (k < n) {
        a += genome[k];
        x += std::cos(a) / static_cast<double>(n);
        y += std::sin(a) / static_cast<double>(n);
      }
      // Every link keeps its length 1/n.
      if (k > 0)
        CHECK(std::hypot(joints.at(k, 1) - joints.at(k - 1, 1),
                         joints.at(k, 2) - joints.at(k - 1, 2)) == Approx(1.0 / n).epsilon(1e-12));
    }
    CHECK(std::abs(joints.at(n, 1) - descriptor[0]) <= 1e-12);
    CHECK(std::abs(joints.at(n, 2) - descriptor[1]) <= 1e-12);
  }
}

TEST_CASE("the linkage's trace closes the loop at every sample (Freudenstein)", "[plugins]") {
  setenv("TESSERA_PLUGIN_PATH", kPluginDir.c_str(), 1);
  const auto problem = open_plugin_problem("linkage", "samples = 90");
  // A Grashof crank-rocker: s + l = 20 + 70 <= 50 + 60 (Norton, Design of Machinery, sec. 2.12).
  const std::vector<double> genome = {70.0, 20.0, 60.0, 50.0, 30.0, 25.0};
  const auto trace = problem->trace(genome);
  REQUIRE(trace);
  CHECK(trace->note("caution").find("kinematic only") != std::string::npos);
  const FigureItem& crank = item_named(*trace, "crank pin");
  const FigureItem& rocker = item_named(*trace, "rocker pin");
  REQUIRE(crank.rows() == 90);
  REQUIRE(rocker.rows() == 90);
  const double d = genome[0], a = genome[1], b = genome[2], c = genome[3];
  // Freudenstein's equation (Norton, Design of Machinery, eq. 4.8 / 5.7 notation):
  // K1 cos(theta4) - K2 cos(theta2) + K3 = cos(theta2 - theta4), K1 = d/a, K2 = d/c,
  // K3 = (a^2 - b^2 + c^2 + d^2) / (2 a c); theta2 and theta4 from the traced pins.
  const double k1 = d / a, k2 = d / c, k3 = (a * a - b * b + c * c + d * d) / (2 * a * c);
  for (std::size_t r = 0; r < 90; ++r) {
    INFO("sample " << r);
    const double t2 = std::atan2(crank.at(r, 2), crank.at(r, 1));
    const double t4 = std::atan2(rocker.at(r, 2), rocker.at(r, 1) - d);
    CHECK(k1 * std::cos(t4) - k2 * std::cos(t2) + k3 == Approx(std::cos(t2 - t4)).margin(1e-12));
    CHECK(crank.at(r, 0) == Approx(4.0 * static_cast<double>(r)).margin(1e-12));
  }
  // The coupler path's extent is the evaluated descriptor (width, height).
  double fitness;
  std::vector<double> descriptor;
  evaluate_one(*problem, genome, fitness, descriptor);
  const FigureItem& p = item_named(*trace, "coupler point");
  double x0 = 1e300, x1 = -1e300, y0 = 1e300, y1 = -1e300;
  for (std::size_t r = 0; r < p.rows(); ++r) {
    x0 = std::min(x0, p.at(r, 1)), x1 = std::max(x1, p.at(r, 1));
    y0 = std::min(y0, p.at(r, 2)), y1 = std::max(y1, p.at(r, 2));
  }
  CHECK(x1 - x0 == Approx(descriptor[0]).epsilon(1e-12));
  CHECK(y1 - y0 == Approx(descriptor[1]).epsilon(1e-12));
  // An open loop is an error of the trace, in one line.
  CHECK_THROWS_WITH(problem->trace({70.0, 60.0, 20.0, 50.0, 30.0, 25.0}),
                    Catch::Contains("does not assemble"));
}

TEST_CASE("the arena's traced path ends at the evaluated final position", "[plugins]") {
  setenv("TESSERA_PLUGIN_PATH", kPluginDir.c_str(), 1);
  const auto problem = open_plugin_problem("arena", "");
  const auto scene = problem->scene();
  REQUIRE(scene);
  CHECK(scene->note("units") == "m");
  const FigureItem& start = item_named(*scene, "start");
  std::mt19937_64 rng(8);
  const auto& info = problem->info();
  for (int trial = 0; trial < 5; ++trial) {
    std::vector<double> genome(info.genome_size());
    for (std::size_t i = 0; i < genome.size(); ++i)
      genome[i] =
          std::uniform_real_distribution<double>(info.genome.lower[i], info.genome.upper[i])(rng);
    double fitness;
    std::vector<double> descriptor;
    evaluate_one(*problem, genome, fitness, descriptor);
    const auto trace = problem->trace(genome);
    REQUIRE(trace);
    const FigureItem& path = item_named(*trace, "path");
    const std::size_t last = path.rows() - 1;
    CHECK(path.at(0, 1) == start.values[0]);
    CHECK(path.at(0, 2) == start.values[1]);
    // Descriptor = final position / arena size (10 m x 10 m by default), placed by the scene's
    // descriptor map.
    CHECK(path.at(last, 1) / 10.0 == Approx(descriptor[0]).epsilon(1e-14));
    CHECK(path.at(last, 2) / 10.0 == Approx(descriptor[1]).epsilon(1e-14));
    // Fitness = minus the final distance to the goal, the traced series' last value.
    const FigureItem& distance = item_named(*trace, "goal distance");
    CHECK(-distance.at(distance.rows() - 1, 1) == Approx(fitness).epsilon(1e-14));
    // A differential-drive robot's centre moves at (v_left + v_right) / 2 <= max_speed, so at
    // most max_speed * dt between rows (defaults 1 m/s and 0.2 s; a chord is at most its arc).
    for (std::size_t r = 1; r < path.rows(); ++r)
      CHECK(std::hypot(path.at(r, 1) - path.at(r - 1, 1), path.at(r, 2) - path.at(r - 1, 2)) <=
            0.2 + 1e-12);
  }
}
