// The MuJoCo gait plugin through the plugin ABI: contact and duty factor (a robot standing still
// touches the floor with every foot all the time), free fall before contact (g t^2 / 2 with
// g = 9.81 m/s^2), the damage options, the controller signal and determinism.
// Skipped (with a warning) only when the build has no MuJoCo (TESSERA_WITH_MUJOCO off or MuJoCo
// not found); a missing plugin in a build that found MuJoCo fails.
#include <stdlib.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <memory>
#include <numeric>
#include <string>
#include <vector>

#include "core/base/errors.hpp"
#include "core/base/types.hpp"
#include "gait/gait_controller.hpp"
#include "problems/registry.hpp"

namespace {

namespace fs = std::filesystem;
namespace gait = tessera::gait;

// Whether this build should have produced the gait plugin, read from the CMake cache.
bool mujoco_configured() {
  std::ifstream cache(std::string(TESSERA_BINARY_DIR) + "/CMakeCache.txt");
  std::string line;
  bool option_on = false, found = false;
  while (std::getline(cache, line)) {
    if (line.rfind("TESSERA_WITH_MUJOCO:BOOL=", 0) == 0)
      option_on = line.substr(line.find('=') + 1) == "ON";
    if (line.rfind("mujoco_DIR:PATH=", 0) == 0) found = line.find("NOTFOUND") == std::string::npos;
  }
  return option_on && found;
}

bool gait_plugin_available() {
  const bool built = fs::exists(std::string(TESSERA_PLUGIN_DIR) + "/tessera-plugin-gait.so");
  if (!built && mujoco_configured()) FAIL("MuJoCo was found but the gait plugin was not built");
  if (!built) WARN("gait plugin not built (no MuJoCo in this build): test skipped");
  if (built) setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 1);
  return built;
}

struct Outcome {
  double fitness = 0.0;
  std::vector<double> duty;
  bool valid = false;
  double distance = 0.0, fell = 0.0, self_collision = 0.0, final_height = 0.0;
};

Outcome run(const std::string& options, const std::vector<double>& genome) {
  const auto problem = tessera::open_plugin_problem("gait", options);
  const auto& info = problem->info();
  REQUIRE(info.genome_size() == gait::kGenomeSize);
  REQUIRE(info.descriptor_size() == gait::kLegs);
  REQUIRE(info.extra_names.size() == 4);
  auto instance = problem->make_instance();
  tessera::Batch batch;
  batch.resize(1, info.genome_size(), info.descriptor_size(), info.extra_names.size());
  std::copy(genome.begin(), genome.end(), batch.genomes.begin());
  instance->evaluate(batch, 0, 1);
  Outcome o;
  o.fitness = batch.fitness[0];
  o.duty.assign(batch.descriptors.begin(), batch.descriptors.end());
  o.valid = batch.valid[0] != 0;
  o.distance = batch.extras[0];
  o.fell = batch.extras[1];
  o.self_collision = batch.extras[2];
  o.final_height = batch.extras[3];
  return o;
}

// A tripod gait: legs 0, 2, 4 in phase, 1, 3, 5 half a period later; lift leads swing by a
// quarter period so each foot is up while it swings forward.
std::vector<double> tripod() {
  std::vector<double> g(gait::kGenomeSize);
  for (std::size_t leg = 0; leg < gait::kLegs; ++leg) {
    const double phase = (leg % 2 == 0) ? 0.0 : 0.5;
    double* swing = &g[(2 * leg) * 3];
    double* lift = &g[(2 * leg + 1) * 3];
    swing[0] = 0.7, swing[1] = phase, swing[2] = 0.5;
    lift[0] = 0.3, lift[1] = std::fmod(phase + 0.75, 1.0), lift[2] = 0.5;
  }
  return g;
}

constexpr double kG = 9.81;          // m/s^2, the gravity the model declares
constexpr double kTimestep = 0.005;  // s, the model's step

}  // namespace

TEST_CASE("A robot standing still has duty factor 1 on every leg", "[gait]") {
  if (!gait_plugin_available()) return;
  // Zero amplitude: every joint holds 0, the legs hang straight down with the feet on the floor.
  const Outcome o = run("", std::vector<double>(gait::kGenomeSize, 0.0));
  REQUIRE(o.valid);
  for (double d : o.duty) CHECK(d == 1.0);
  CHECK(std::fabs(o.distance) < 1e-3);
  CHECK(o.fell == 0.0);
  CHECK(o.self_collision == 0.0);
  // Resting on the feet: the torso stays near its start height (0.115 m, feet touching).
  CHECK(o.final_height == Approx(0.115).margin(0.01));
}

TEST_CASE("The body falls as g t^2 / 2 before contact", "[gait]") {
  if (!gait_plugin_available()) return;
  // Dropped from 1 m with zero control: the feet (0.115 m below the torso) stay clear of the
  // floor for sqrt(2 * 0.885 / 9.81) = 0.42 s, so 0.2 s and 0.3 s are pure free fall.
  // MuJoCo's Euler scheme updates the velocity before the position (semi-implicit), which
  // overshoots the exact drop by g dt t / 2 (first-order error; common practice).
  for (double t : {0.2, 0.3}) {
    const Outcome o = run("start_height = 1.0\nduration = " + std::to_string(t),
                          std::vector<double>(gait::kGenomeSize, 0.0));
    REQUIRE(o.valid);
    const double exact = 1.0 - 0.5 * kG * t * t;
    INFO("t = " << t << ": height " << o.final_height << ", g t^2/2 predicts " << exact);
    CHECK(std::fabs(o.final_height - exact) <= 0.5 * kG * kTimestep * t + 1e-9);
    CHECK(o.final_height < exact);  // the scheme's error has this sign
    // Exactly, after N steps of v += -g dt; z += v dt: z0 - g dt^2 N (N + 1) / 2.
    const double n = std::round(t / kTimestep);
    CHECK(o.final_height ==
          Approx(1.0 - 0.5 * kG * kTimestep * kTimestep * n * (n + 1.0)).margin(1e-9));
    for (double d : o.duty) CHECK(d == 0.0);  // no foot touched the floor
  }
}

TEST_CASE("A tripod gait walks forward and touches the floor part of the time", "[gait]") {
  if (!gait_plugin_available()) return;
  const Outcome o = run("", tripod());
  REQUIRE(o.valid);
  CHECK(o.distance > 0.3);  // about 0.22 m/s for this robot
  CHECK(o.fell == 0.0);
  CHECK(o.self_collision == 0.0);
  for (double d : o.duty) {
    CHECK(d > 0.1);
    CHECK(d < 0.9);
  }
  // Deterministic: the same genome gives the same bits.
  const Outcome again = run("", tripod());
  CHECK(again.fitness == o.fitness);
  CHECK(again.duty == o.duty);
}

TEST_CASE("Damage options change the robot as described", "[gait]") {
  if (!gait_plugin_available()) return;
  const std::vector<double> stand(gait::kGenomeSize, 0.0);
  SECTION("a removed shin never touches the floor") {
    const Outcome o = run("leg_length_scale = [1, 0, 1, 1, 1, 1]", stand);
    REQUIRE(o.valid);
    CHECK(o.duty[1] == 0.0);
    CHECK(o.duty[0] == 1.0);
    CHECK(o.duty[4] == 1.0);
  }
  SECTION("a stuck joint ignores its signal") {
    // Joint 2 is the swing of leg 1; change only its parameters: nothing else may change.
    auto a = tripod(), b = tripod();
    b[2 * 3 + 0] = 0.05, b[2 * 3 + 1] = 0.9, b[2 * 3 + 2] = 0.1;
    const std::string stuck = "stuck_joint = 2\nstuck_angle = 0.4";
    const Outcome oa = run(stuck, a), ob = run(stuck, b);
    CHECK(oa.fitness == ob.fitness);
    CHECK(oa.duty == ob.duty);
    CHECK(run("", a).fitness != run("", b).fitness);  // without damage the parameters matter
  }
  SECTION("motors without strength let the body sink") {
    // Lift servos at zero strength: the legs fold under the weight and the torso drops.
    std::string weak = "motor_strength = [";
    for (std::size_t j = 0; j < gait::kJoints; ++j)
      weak += (j ? ", " : "") + std::string(j % 2 ? "0" : "1");
    weak += "]";
    const Outcome intact = run("", stand), limp = run(weak, stand);
    CHECK(limp.final_height < intact.final_height - 0.02);
  }
  SECTION("bad options are refused with a reason") {
    auto refusal = [](const std::string& options) {
      try {
        tessera::open_plugin_problem("gait", options);
      } catch (const tessera::InputError& e) {
        return std::string(e.what());
      }
      return std::string();
    };
    CHECK(refusal("stuck_joint = 12").find("stuck_joint") != std::string::npos);
    CHECK(refusal("stuck_joint = 0\nstuck_angle = 2.0").find("outside the joint's range") !=
          std::string::npos);
    CHECK(refusal("stuck_angle = 0.1").find("needs 'stuck_joint'") != std::string::npos);
    CHECK(refusal("leg_length_scale = [1, 1]").find("6 finite numbers") != std::string::npos);
    CHECK(refusal("model_file = \"/nonexistent/robot.xml\"").find("model_file") !=
          std::string::npos);
    CHECK(refusal("legs = 8").find("unknown option 'legs'") != std::string::npos);
  }
}

TEST_CASE("Controller signal: square wave of the duty cycle, smoothed", "[gait]") {
  // Duty 1: always high; duty 0: always low (the smoothing keeps constants constant).
  for (double v : gait::periodic_signal(0.5, 0.3, 1.0)) CHECK(v == Approx(0.5));
  for (double v : gait::periodic_signal(0.5, 0.3, 0.0)) CHECK(v == Approx(-0.5));
  // Duty 0.25: the mean of the square wave is 0.25 - 0.75 = -0.5; smoothing preserves the mean.
  const auto s = gait::periodic_signal(1.0, 0.0, 0.25);
  CHECK(std::accumulate(s.begin(), s.end(), 0.0) / static_cast<double>(s.size()) ==
        Approx(-0.5).margin(1e-12));
  // High in the middle of the duty window, low in the middle of the rest.
  CHECK(s[12] > 0.9);
  CHECK(s[62] < -0.9);
  // A phase shift moves the wave: phase 0.5 puts the window at samples 50..74.
  const auto shifted = gait::periodic_signal(1.0, 0.5, 0.25);
  CHECK(shifted[62] == Approx(s[12]));
  // Periodic interpolation: t and t + period give the same value.
  CHECK(gait::signal_at(s, 0.37, 1.0) == Approx(gait::signal_at(s, 1.37, 1.0)));
}
