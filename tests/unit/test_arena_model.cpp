// The arena problem's model (plugins/arena/*.hpp) against hand-computed geometry, the closed-form
// differential-drive circle, a wall hit at speeds that would jump it, and a hand-counted raster
// of the area a straight path covers; layout files refused with file:line; the plugin built from
// these headers gives the same numbers bit for bit.
#include <stdlib.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <string>
#include <vector>

#include "arena/arena_geometry.hpp"
#include "arena/arena_layout.hpp"
#include "arena/arena_options.hpp"
#include "arena/arena_raster.hpp"
#include "arena/arena_robot.hpp"
#include "arena/arena_sim.hpp"
#include "core/base/errors.hpp"
#include "problems/registry.hpp"

using namespace tessera::arena;

namespace {

constexpr double kSqrt2 = std::numbers::sqrt2;

}  // namespace

TEST_CASE("ray against segment: hand-computed hits and misses") {
  // Ray from the origin along +x meets the vertical segment x = 2 at distance 2.
  auto t = ray_segment({0, 0}, {1, 0}, {{2, -1}, {2, 1}});
  REQUIRE(t);
  CHECK(*t == Approx(2.0).epsilon(1e-15));
  // Along the diagonal (1, 1)/sqrt 2, the horizontal segment y = 2 is met at (2, 2): 2 sqrt 2.
  t = ray_segment({0, 0}, {1 / kSqrt2, 1 / kSqrt2}, {{0, 2}, {4, 2}});
  REQUIRE(t);
  CHECK(*t == Approx(2 * kSqrt2).epsilon(1e-14));
  // From (1, 3) pointing down at y = 0 from x = 0 to 5: distance 3, whatever the segment's
  // direction.
  t = ray_segment({1, 3}, {0, -1}, {{5, 0}, {0, 0}});
  REQUIRE(t);
  CHECK(*t == Approx(3.0).epsilon(1e-15));
  // Misses: the segment behind the ray, beside it (the line crosses at y = 2 > 1), parallel.
  CHECK_FALSE(ray_segment({0, 0}, {1, 0}, {{-2, -1}, {-2, 1}}));
  CHECK_FALSE(ray_segment({0, 0}, {1, 1}, {{5, -1}, {5, 1}}));
  CHECK_FALSE(ray_segment({0, 0}, {1, 0}, {{0, 1}, {5, 1}}));
  // An end point counts: the ray along +x touches the segment (2, 0)-(2, 1) at its end.
  t = ray_segment({0, 0}, {1, 0}, {{2, 0}, {2, 1}});
  REQUIRE(t);
  CHECK(*t == Approx(2.0));
}

TEST_CASE("moving disc against segment: first contact by hand") {
  // Radius 0.5 from the origin towards +x by 3 m; wall x = 2 (y from -1 to 1). The rim touches
  // when the centre reaches x = 1.5: t = 1.5 / 3 = 0.5.
  auto t = swept_disc_segment({0, 0}, {3, 0}, 0.5, {{2, -1}, {2, 1}});
  REQUIRE(t);
  CHECK(*t == Approx(0.5).epsilon(1e-14));
  // The wall's end (2, 0.3) lies 0.3 off the path: contact when (x - 2)^2 + 0.09 = 0.25,
  // x = 1.6, t = 1.6 / 3.
  t = swept_disc_segment({0, 0}, {3, 0}, 0.5, {{2, 0.3}, {2, 3}});
  REQUIRE(t);
  CHECK(*t == Approx(1.6 / 3.0).epsilon(1e-14));
  // The end (2, 1) lies 1 off the path, more than the radius: no contact.
  CHECK_FALSE(swept_disc_segment({0, 0}, {3, 0}, 0.5, {{2, 1}, {2, 3}}));
  // Stops short of the wall, or moves away from it: no contact.
  CHECK_FALSE(swept_disc_segment({0, 0}, {1, 0}, 0.5, {{2, -1}, {2, 1}}));
  CHECK_FALSE(swept_disc_segment({0, 0}, {-3, 0}, 0.5, {{2, -1}, {2, 1}}));
  // Touching already (centre 0.5 from the wall) and pressing on: contact at once.
  t = swept_disc_segment({1.5, 0}, {1, 0}, 0.5, {{2, -1}, {2, 1}});
  REQUIRE(t);
  CHECK(*t == 0.0);
  // Touching and sliding along the wall: free.
  CHECK_FALSE(swept_disc_segment({1.5, 0}, {0, 0.3}, 0.5, {{2, -1}, {2, 1}}));
  // Oblique approach: centre from (0, 0) by (4, 4) towards the wall y = 3 (x from 0 to 10);
  // contact at y = 2.5, t = 2.5 / 4.
  t = swept_disc_segment({0, 0}, {4, 4}, 0.5, {{0, 3}, {10, 3}});
  REQUIRE(t);
  CHECK(*t == Approx(0.625).epsilon(1e-14));
}

TEST_CASE("differential drive follows the closed-form circle") {
  // Constant wheel speeds: a circle of radius R = L (vr + vl) / (2 (vr - vl)) at angular speed
  // w = (vr - vl) / L (Siegwart & Nourbakhsh, Introduction to Autonomous Mobile Robots, 2004).
  const double L = 0.5, vl = 0.2, vr = 0.6, dt = 0.2;
  const double R = L * (vr + vl) / (2.0 * (vr - vl));  // 0.5 m
  const double w = (vr - vl) / L;                      // 0.8 rad/s
  Pose pose{{3.0, 2.0}, 0.3};
  // Centre on the left of the heading, R away.
  const Vec2 centre{pose.at.x - R * std::sin(pose.heading), pose.at.y + R * std::cos(pose.heading)};
  const int steps = static_cast<int>(std::round(2 * std::numbers::pi / w / dt)) + 3;
  for (int k = 1; k <= steps; ++k) {
    pose = drive(pose, vl, vr, L, dt);
    const double angle = 0.3 + w * dt * k;
    const Vec2 expected{centre.x + R * std::sin(angle), centre.y - R * std::cos(angle)};
    REQUIRE(pose.at.x == Approx(expected.x).margin(1e-12));
    REQUIRE(pose.at.y == Approx(expected.y).margin(1e-12));
    REQUIRE(norm(pose.at - centre) == Approx(R).epsilon(1e-12));
    REQUIRE(std::cos(pose.heading) == Approx(std::cos(angle)).margin(1e-12));
  }
  // Equal wheel speeds: a straight line at that speed.
  Pose straight{{0, 0}, std::numbers::pi / 4};
  for (int k = 0; k < 10; ++k) straight = drive(straight, 0.7, 0.7, L, dt);
  CHECK(straight.at.x == Approx(1.4 / kSqrt2).epsilon(1e-12));
  CHECK(straight.at.y == Approx(1.4 / kSqrt2).epsilon(1e-12));
  // Opposite speeds: turning on the spot.
  Pose spin{{1, 1}, 0};
  spin = drive(spin, -0.5, 0.5, L, 0.5);
  CHECK(spin.at.x == Approx(1.0).margin(1e-15));
  CHECK(spin.heading == Approx(1.0));
}

TEST_CASE("no tunnelling through a thin wall at the maximum speed") {
  // A wall at x = 3 between start and goal; the controller (no hidden units, bias weights 10)
  // drives both wheels at tanh(10) of the maximum speed. With dt = 2 s at 1 m/s a step covers
  // almost 2 m, four times the robot's diameter: a position-only test would step over the wall.
  const Layout layout =
      parse_layout("arena 10 4\nstart 1 2 0\ngoal 9 2 0.3\nwall 3 0.5 3 3.5\n", "test");
  RobotSettings r;
  r.hidden = 0;
  r.dt = 2.0;
  r.duration = 20.0;
  r.trace = r.steps();
  Simulator sim(layout, r);
  std::vector<double> weights(sim.genome_size(), 0.0);
  const std::size_t per_output = r.inputs() + 1;
  weights[per_output - 1] = 10.0;      // left wheel bias
  weights[2 * per_output - 1] = 10.0;  // right wheel bias
  const Episode ep = sim.run(weights);
  for (const Vec2& p : ep.trace) REQUIRE(p.x <= 3.0 - r.radius + 1e-12);
  // It stopped against the wall, not before it.
  CHECK(ep.final_pose.at.x == Approx(3.0 - r.radius).margin(1e-6));
  CHECK(ep.collisions > 0);
  // At 25 m per step, a wall whose end lies 0.1 m beside the path: the rim catches the end
  // when (x - 30)^2 + 0.1^2 = 0.25^2, x = 30 - sqrt(0.0525).
  r.dt = 25.0;
  r.duration = 50.0;
  r.trace = r.steps();
  Simulator fast(parse_layout("arena 60 4\nstart 1 2 0\ngoal 59 2 0.3\nwall 30 2.1 30 4\n", "t"),
                 r);
  const Episode far = fast.run(weights);
  for (const Vec2& p : far.trace) REQUIRE(p.x < 30.0);
  CHECK(far.final_pose.at.x == Approx(30.0 - std::sqrt(0.0525)).margin(1e-6));
}

TEST_CASE("area covered by a straight path equals the hand-counted raster cells") {
  // 4 m x 2 m, cells of 0.1 m: 40 x 20 = 800 cells, all free (the border walls lie 0.05 m from
  // the nearest centres, more than a quarter cell). A disc of radius 0.23 swept from (1, 1) to
  // (3, 1) covers the centres within 0.23 of that segment:
  //   rectangle part, x in [1, 3]: 20 columns (1.05 .. 2.95) x 4 rows (y = 0.85, 0.95, 1.05,
  //   1.15; 0.75 and 1.25 lie 0.25 away) = 80;
  //   each end cap: columns 0.95 and 0.85 (resp. 3.05 and 3.15), same 4 rows, all within 0.23
  //   (the farthest, (0.85, 0.85), is 0.212 away), column 0.75 is 0.25 away: 8 per end.
  // Total 96 cells, area covered 96 / 800 = 0.12.
  const Layout open = parse_layout("arena 4 2\nstart 1 1 0\ngoal 3.5 1 0.1\n", "test");
  AreaRaster raster(open.width, open.height, 0.1, open.walls);
  CHECK(raster.free_cells() == 800);
  raster.sweep({1, 1}, {3, 1}, 0.23);
  CHECK(raster.visited_cells() == 96);
  CHECK(raster.covered() == Approx(0.12));
  // The same path in 20 small steps covers the same cells (the union of the capsules).
  raster.clear();
  for (int k = 0; k < 20; ++k) raster.sweep({1 + 0.1 * k, 1}, {1 + 0.1 * (k + 1), 1}, 0.23);
  CHECK(raster.visited_cells() == 96);
  // A wall 0.02 m from a column of centres (x = 2.05) takes those 20 cells out of the free ones.
  const Layout walled =
      parse_layout("arena 4 2\nstart 1 1 0\ngoal 3.5 1 0.1\nwall 2.03 0 2.03 2\n", "t");
  AreaRaster blocked(walled.width, walled.height, 0.1, walled.walls);
  CHECK(blocked.free_cells() == 780);
}

TEST_CASE("layout files: refused with file and line, boxes expand to four walls") {
  const Layout l = parse_layout(
      "# comment\narena 10 5\nstart 1 1 90\ngoal 9 4 0.5  # trailing comment\nbox 2 2 3 3\n"
      "mark a 5 2.5 1\n",
      "x.txt");
  CHECK(l.walls.size() == 4 + 4);
  CHECK(l.heading == Approx(std::numbers::pi / 2));
  REQUIRE(l.marks.size() == 1);
  CHECK(l.marks[0].name == "a");
  auto fails = [](const std::string& text, const std::string& message) {
    try {
      parse_layout(text, "bad.txt");
      FAIL("accepted: " << text);
    } catch (const LayoutError& e) {
      CHECK(std::string(e.what()) == message);
    }
  };
  fails("arena 10 5\nstart 1 1 0\ngoal 9 4 0.5\ndoor 1 2 3 4\n",
        "bad.txt:4: unknown directive 'door' (expected arena, start, goal, wall, box, mark)");
  fails("arena 10 5\nstart 1 1\n", "bad.txt:2: start takes 3 numbers (X Y HEADING), found 2");
  fails("arena 10 5\nstart 1 1 0\ngoal 9 4 0.5\nwall 1 1 11 1\n",
        "bad.txt:4: wall reaches outside the arena");
  fails("start 1 1 0\n", "bad.txt:1: the first directive must be 'arena WIDTH HEIGHT'");
  fails("arena 10 5\nstart 1 1 0\ngoal 9 x 0.5\n", "bad.txt:3: 'x' is not a finite number");
  fails("arena 10 5\nstart 1 1 0\n", "bad.txt: no 'goal X Y RADIUS' directive");
  fails("arena 10 5\nstart 1 1 0\ngoal 9 4 0.5\nmark a 1 1 1\nmark a 2 2 1\n",
        "bad.txt:5: a second mark named 'a'");
}

TEST_CASE("the arena plugin gives exactly what the model headers give") {
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 1);
  const std::string layout = std::string(TESSERA_SOURCE_DIR) + "/problems/arenas/maze.txt";
  const std::string options = "layout = \"" + layout + "\"\ntrace = 4\nhidden = 3\n";
  const auto problem = tessera::open_plugin_problem("arena", options);
  const auto& info = problem->info();
  // Inputs 5 rays + 3 goal; (8 + 1) x 3 hidden weights + (3 + 1) x 2 output weights = 35.
  CHECK(info.genome_size() == 35);
  CHECK(info.descriptor_names == std::vector<std::string>{"x", "y"});
  CHECK(info.fitness_lower == Approx(-std::hypot(20.0, 20.0)));
  REQUIRE(info.extra_names.size() == 4 + 5 + 8);
  CHECK(info.extra_names[4] == "first_turn_time");
  CHECK(info.extra_names[9] == "trace_x_0");

  ArenaOptions o = read_options(options.c_str());
  Simulator sim(read_layout(o), o.robot);
  tessera::Batch batch;
  batch.resize(6, 35, 2, info.extra_names.size());
  for (std::size_t i = 0; i < batch.genomes.size(); ++i)
    batch.genomes[i] = 3.0 * std::sin(1.7 * static_cast<double>(i) + 0.3);
  problem->make_instance()->evaluate(batch, 0, batch.count);
  for (std::size_t k = 0; k < batch.count; ++k) {
    const Episode ep = sim.run(batch.genome(k));
    REQUIRE(batch.valid[k] == 1);
    REQUIRE(batch.fitness[k] == -norm(ep.final_pose.at - sim.layout().goal));
    REQUIRE(batch.descriptor(k)[0] == ep.final_pose.at.x / 20.0);
    const double* x = batch.extras.data() + k * batch.extra_size;
    REQUIRE(x[2] == ep.path_length);
    REQUIRE(x[3] == ep.area_covered);
    REQUIRE(x[9 + 3] == ep.trace[3].x);  // the last trace point is the final position
    REQUIRE(ep.trace[3].x == ep.final_pose.at.x);
  }
  // Bad options are refused with the reason.
  auto refused = [](const std::string& text, const std::string& part) {
    try {
      tessera::open_plugin_problem("arena", text);
      FAIL("accepted: " << text);
    } catch (const tessera::InputError& e) {
      CHECK_THAT(e.what(), Catch::Contains(part));
    }
  };
  refused("speed = 2\n", "unknown option 'speed'");
  refused("recurrent = true\nhidden = 0\n", "needs hidden units");
  refused("layout = \"/nonexistent/arena.txt\"\n", "/nonexistent/arena.txt: cannot open");
  refused("radius = 2.5\n", "overlaps a wall at its start position");
}

TEST_CASE("recurrent controllers have context weights and remember") {
  // Elman network: hidden units also see their previous activations (Elman 1990). Weight count
  // for 8 inputs, 3 hidden: 3 x (8 + 3 + 1) + 2 x (3 + 1) = 44.
  CHECK(NeuralController::weight_count(8, 3, true) == 44);
  CHECK(NeuralController::weight_count(8, 3, false) == 35);
  CHECK(NeuralController::weight_count(8, 0, false) == 18);
  // One input, one hidden unit with a self-connection: h_t = tanh(x + h_{t-1}), out = tanh(h).
  NeuralController net(1, 1, true);
  const std::vector<double> w = {1.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0};
  const std::vector<double> in = {0.5};
  double out[2];
  net.step(w, in, out);
  const double h1 = std::tanh(0.5);
  CHECK(out[0] == Approx(std::tanh(h1)).epsilon(1e-15));
  net.step(w, in, out);
  CHECK(out[0] == Approx(std::tanh(std::tanh(0.5 + h1))).epsilon(1e-15));
  net.reset();
  net.step(w, in, out);
  CHECK(out[0] == Approx(std::tanh(h1)).epsilon(1e-15));
}
