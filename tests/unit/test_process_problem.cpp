// External evaluator processes: the JSON line protocol, the Python arm worker against
// the closed form, and each kind of worker fault. The test workers live in
// tests/fixtures/workers/ (fixture_protocol.py describes the function they compute and how their
// faults are triggered by the genome, which this file mirrors).
#include <sys/wait.h>
#include <unistd.h>

#include <bit>
#include <catch2/catch.hpp>
#include <cerrno>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <numbers>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "core/base/errors.hpp"
#include "eval/process_problem.hpp"
#include "eval/thread_evaluator.hpp"

namespace {

using namespace tessera;
namespace fs = std::filesystem;

const std::string kPython = "/usr/bin/python3";

std::string fixture(const std::string& name) {
  return std::string(TESSERA_SOURCE_DIR) + "/tests/fixtures/workers/" + name;
}

ProblemSpec make_spec(std::vector<std::string> command, std::size_t workers, double timeout,
                      std::size_t genome_size, std::size_t descriptor_size,
                      std::string log_path = "") {
  ProblemSpec spec;
  spec.kind = "process";
  spec.name = "test-worker";
  spec.source = "test.toml";
  spec.command = std::move(command);
  spec.workers = workers;
  spec.timeout_seconds = timeout;
  spec.log_path = std::move(log_path);
  ProblemInfo& info = spec.declared;
  info.name = spec.name;
  info.genome = {std::vector<double>(genome_size, -4.0), std::vector<double>(genome_size, 4.0)};
  info.descriptor = {std::vector<double>(descriptor_size, -4.0),
                     std::vector<double>(descriptor_size, 4.0)};
  for (std::size_t j = 0; j < descriptor_size; ++j) {
    std::string name = "d";  // appended, not "d" + ...: GCC 12 warns falsely (-Wrestrict)
    name += std::to_string(j);
    info.descriptor_names.push_back(name);
  }
  info.fitness_lower = -100.0;
  info.fitness_upper = 100.0;
  return spec;
}

Batch uniform_batch(std::size_t count, std::size_t genome_size, std::size_t descriptor_size,
                    double lower, double upper, std::uint64_t seed) {
  Batch batch;
  batch.resize(count, genome_size, descriptor_size, 0);
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> uniform(lower, upper);
  for (double& g : batch.genomes) g = uniform(rng);
  // Poison the outputs so that a result the pool forgot to write cannot pass.
  std::fill(batch.fitness.begin(), batch.fitness.end(), 12345.0);
  std::fill(batch.descriptors.begin(), batch.descriptors.end(), 12345.0);
  std::fill(batch.valid.begin(), batch.valid.end(), 2);
  return batch;
}

// Mirrors fixture_protocol.trigger / fault_kind (abs(g0) * 2^20 is exact in both languages).
std::int64_t trigger_number(double g0) {
  return static_cast<std::int64_t>(std::floor(std::abs(g0) * 1048576.0));
}
bool trigger(double g0, double percent) {
  return static_cast<double>(trigger_number(g0) % 100) < percent;
}
int fault_kind(double g0, int kinds) {
  return static_cast<int>(trigger_number(g0) / 100 % kinds);
}

std::uint64_t bits(double x) {
  return std::bit_cast<std::uint64_t>(x);
}

// The fixture workers' answer (fixture_protocol.evaluate): the descriptor echoes the genome and
// the fitness adds the genome values in order; both must come back bit for bit.
void require_fixture_answer(const Batch& batch, std::size_t i) {
  INFO("candidate " << i);
  REQUIRE(batch.valid[i] == 1);
  const auto genome = batch.genome(i);
  double total = 0.0;
  for (double g : genome) total += g;
  REQUIRE(bits(batch.fitness[i]) == bits(total));
  for (std::size_t j = 0; j < batch.descriptor_size; ++j)
    REQUIRE(bits(batch.descriptor(i)[j]) == bits(genome[j]));
}

std::map<std::string, std::uint64_t> counts_of(const Problem& problem) {
  std::map<std::string, std::uint64_t> out;
  for (const auto& [reason, count] : problem.failure_counts()) out[reason] = count;
  return out;
}

std::string temp_log(const std::string& name) {
  const fs::path path = fs::temp_directory_path() /
                        ("tessera-process-" + std::to_string(::getpid()) + "-" + name + ".log");
  fs::remove(path);
  return path.string();
}

std::string read_file(const std::string& path) {
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

std::size_t count_lines_with(const std::string& text, const std::string& needle) {
  std::size_t count = 0;
  for (std::size_t at = text.find(needle); at != std::string::npos; at = text.find(needle, at + 1))
    ++count;
  return count;
}

// Planar arm, README.md "Shipped problems": p = sum_i (1/n)(cos a_i, sin a_i) with
// a_i = theta_1 + ... + theta_i (forward kinematics of a planar serial chain, e.g. Craig,
// Introduction to Robotics), fitness = -(population variance of the angles).
void arm_closed_form(std::span<const double> theta, double& fitness, double& x, double& y) {
  const double n = static_cast<double>(theta.size());
  double angle = 0.0, mean = 0.0;
  x = y = 0.0;
  for (double t : theta) {
    angle += t;
    x += std::cos(angle) / n;
    y += std::sin(angle) / n;
    mean += t / n;
  }
  double variance = 0.0;
  for (double t : theta) variance += (t - mean) * (t - mean) / n;
  fitness = -variance;
}

}  // namespace

TEST_CASE("JSON numbers written by nlohmann read back to the same double") {
  // The protocol relies on shortest round-trip printing (nlohmann's Grisu2 dtoa) and correctly
  // rounded parsing: any finite double must survive dump + parse bit for bit.
  std::mt19937_64 rng(2024);
  std::vector<double> values = {0.1,
                                1.0 / 3.0,
                                -0.0,
                                std::numeric_limits<double>::denorm_min(),
                                std::numeric_limits<double>::min(),
                                std::numeric_limits<double>::max(),
                                -std::numeric_limits<double>::max(),
                                std::numbers::pi,
                                9007199254740993.0};
  while (values.size() < 200000) {
    const double x = std::bit_cast<double>(rng());
    if (std::isfinite(x)) values.push_back(x);
  }
  std::size_t mismatches = 0;
  for (double x : values) {
    const std::string text = nlohmann::json(x).dump();
    const double back = nlohmann::json::parse(text).get<double>();
    if (bits(back) != bits(x)) ++mismatches;
  }
  REQUIRE(mismatches == 0);
}

TEST_CASE("genomes cross to a Python worker and back bit for bit") {
  // Python's json prints floats with repr(), also shortest round-trip (Python docs, "Floating
  // point arithmetic: issues and limitations"); the echo worker sends the genome back.
  constexpr std::size_t kSize = 6;  // also the worker's argument below
  auto problem = open_process_problem(
      make_spec({kPython, fixture("echo_worker.py"), "0", "6"}, 2, 20.0, kSize, kSize));
  Batch batch = uniform_batch(300, kSize, kSize, -1.0, 1.0, 7);
  std::mt19937_64 rng(99);
  for (double& g : batch.genomes) {
    // Random sign and mantissa, exponent field below 2000 (|x| < 2^977) so that sums stay finite;
    // includes subnormals (exponent field 0).
    const std::uint64_t exponent = rng() % 2000;
    g = std::bit_cast<double>((rng() & 0x800FFFFFFFFFFFFFull) | (exponent << 52));
  }
  batch.genomes[0] = -0.0;
  batch.genomes[1] = std::numeric_limits<double>::denorm_min();
  batch.genomes[2] = 0.1;
  ThreadEvaluator evaluator(problem, 3);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) require_fixture_answer(batch, i);
  REQUIRE(counts_of(*problem).empty());
}

TEST_CASE("the Python arm worker agrees with the closed form") {
  const std::size_t workers = GENERATE(1, 3);
  constexpr std::size_t kJoints = 10;
  auto spec =
      make_spec({kPython, std::string(TESSERA_SOURCE_DIR) + "/problems/examples/arm_worker.py"},
                workers, 30.0, kJoints, 2);
  spec.declared.fitness_lower = -std::numbers::pi * std::numbers::pi;
  spec.declared.fitness_upper = 0.0;
  auto problem = open_process_problem(spec);
  Batch batch = uniform_batch(400, kJoints, 2, -std::numbers::pi, std::numbers::pi, 11);
  // Textbook postures: straight arm along x reaches (1, 0); first joint at pi/2 points it up.
  std::fill_n(batch.genomes.begin(), kJoints, 0.0);
  std::fill_n(batch.genomes.begin() + kJoints, kJoints, 0.0);
  batch.genomes[kJoints] = std::numbers::pi / 2;
  ThreadEvaluator evaluator(problem, 4);
  evaluator.evaluate(batch);

  REQUIRE(batch.descriptors[0] == Approx(1.0).margin(1e-15));
  REQUIRE(batch.descriptors[1] == Approx(0.0).margin(1e-15));
  REQUIRE(batch.descriptors[2] == Approx(0.0).margin(1e-15));
  REQUIRE(batch.descriptors[3] == Approx(1.0).margin(1e-15));
  // Not bit-exact in general: numpy adds pairwise (8 partial sums for n >= 8) where the closed
  // form adds in order, and numpy's AVX-512 cos/sin differ from glibc's in the last bit for
  // many arguments. Each is an error of a few ulp on values of size <= 1 (or <= pi^2).
  std::size_t exact = 0;
  for (std::size_t i = 0; i < batch.count; ++i) {
    INFO("candidate " << i << ", " << workers << " workers");
    REQUIRE(batch.valid[i] == 1);
    double fitness, x, y;
    arm_closed_form(batch.genome(i), fitness, x, y);
    REQUIRE(std::abs(batch.fitness[i] - fitness) <= 1e-12);
    REQUIRE(std::abs(batch.descriptor(i)[0] - x) <= 1e-12);
    REQUIRE(std::abs(batch.descriptor(i)[1] - y) <= 1e-12);
    exact += bits(batch.fitness[i]) == bits(fitness) && bits(batch.descriptor(i)[0]) == bits(x) &&
             bits(batch.descriptor(i)[1]) == bits(y);
  }
  WARN(exact << " of " << batch.count << " arm answers bit-identical to the closed form");
  REQUIRE(counts_of(*problem).empty());
}

TEST_CASE("a worker that crashes is restarted and only the crashing candidates fail") {
  const std::string log = temp_log("crash");
  auto problem = open_process_problem(
      make_spec({kPython, fixture("crash_worker.py"), "2"}, 2, 20.0, 4, 2, log));
  Batch batch = uniform_batch(400, 4, 2, -3.0, 3.0, 5);
  std::uint64_t expected = 0;
  for (std::size_t i = 0; i < batch.count; ++i) expected += trigger(batch.genome(i)[0], 2);
  REQUIRE(expected >= 3);  // the seed must exercise the fault

  ThreadEvaluator evaluator(problem, 4);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) {
    if (trigger(batch.genome(i)[0], 2)) {
      REQUIRE(batch.valid[i] == 0);
    } else {
      require_fixture_answer(batch, i);
    }
  }
  const std::map<std::string, std::uint64_t> want = {{"crash", expected}};
  REQUIRE(counts_of(*problem) == want);
  // Their stderr went to the log. Each culprit crashed a worker alone on its retry, and at most
  // once before among others (not at all when an earlier crash lost it unread); ids are kept
  // on retry, so the distinct ids are the culprits.
  std::map<std::string, int> crashes;
  std::istringstream lines(read_file(log));
  for (std::string line; std::getline(lines, line);)
    if (line.starts_with("crash_worker: exiting on request ")) ++crashes[line.substr(33)];
  REQUIRE(crashes.size() == expected);
  for (const auto& [id, times] : crashes) REQUIRE(times <= 2);
  fs::remove(log);
}

TEST_CASE("a worker past the timeout is killed and the hanging candidates fail") {
  auto problem =
      // 3 s: a worker's first answer must also cover Python's start-up, which takes over a
      // second on a loaded machine (a 1 s timeout failed healthy workers there).
      open_process_problem(make_spec({kPython, fixture("hang_worker.py"), "4"}, 3, 3.0, 4, 2));
  Batch batch = uniform_batch(120, 4, 2, -3.0, 3.0, 3);
  std::uint64_t expected = 0;
  for (std::size_t i = 0; i < batch.count; ++i) expected += trigger(batch.genome(i)[0], 4);
  REQUIRE(expected >= 2);
  REQUIRE(expected <= 8);  // each costs a timeout

  ThreadEvaluator evaluator(problem, 4);
  const auto start = std::chrono::steady_clock::now();
  evaluator.evaluate(batch);
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  for (std::size_t i = 0; i < batch.count; ++i) {
    if (trigger(batch.genome(i)[0], 4)) {
      REQUIRE(batch.valid[i] == 0);
    } else {
      require_fixture_answer(batch, i);
    }
  }
  const std::map<std::string, std::uint64_t> want = {{"timeout", expected}};
  REQUIRE(counts_of(*problem) == want);
  // Every hang waited one full timeout before its kill, and the hour-long sleeps were cut short.
  REQUIRE(seconds >= 3.0);
  REQUIRE(seconds < 60.0);
}

TEST_CASE("garbage, NaN, wrong lengths, unknown ids and error answers fail only their candidate") {
  constexpr std::size_t kDescriptor = 3;  // also the worker's argument below
  auto problem = open_process_problem(
      make_spec({kPython, fixture("garbage_worker.py"), "10", "3"}, 2, 20.0, 4, kDescriptor));
  Batch batch = uniform_batch(600, 4, kDescriptor, -3.0, 3.0, 8);
  // fault_kind -> reason, as listed in garbage_worker.py.
  const char* reasons[] = {"malformed answer", "not finite",   "wrong descriptor length",
                           "unknown id",       "worker error", "not finite"};
  std::map<std::string, std::uint64_t> want;
  for (std::size_t i = 0; i < batch.count; ++i)
    if (trigger(batch.genome(i)[0], 10)) ++want[reasons[fault_kind(batch.genome(i)[0], 6)]];
  REQUIRE(want.size() == 5);  // the seed must exercise every reason

  ThreadEvaluator evaluator(problem, 4);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) {
    if (trigger(batch.genome(i)[0], 10)) {
      REQUIRE(batch.valid[i] == 0);
    } else {
      require_fixture_answer(batch, i);
    }
  }
  REQUIRE(counts_of(*problem) == want);
}

TEST_CASE("answers out of order land at their own candidate") {
  const std::string log = temp_log("order");
  auto problem = open_process_problem(
      make_spec({kPython, fixture("out_of_order_worker.py")}, 3, 20.0, 5, 2, log));
  Batch batch = uniform_batch(500, 5, 2, -3.0, 3.0, 4);
  ThreadEvaluator evaluator(problem, 4);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) require_fixture_answer(batch, i);
  REQUIRE(counts_of(*problem).empty());
  // The worker reports each group it answered newest first: the order really was scrambled.
  REQUIRE(count_lines_with(read_file(log), "reversed") > 0);
  fs::remove(log);
}

TEST_CASE("inconsistent process descriptions are refused naming the run file") {
  const std::vector<std::string> echo = {kPython, fixture("echo_worker.py")};
  auto refused = [](const ProblemSpec& spec) {
    try {
      open_process_problem(spec);
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("accepted");
  };
  ProblemSpec spec = make_spec(echo, 0, 1.0, 2, 2);
  REQUIRE_THAT(refused(spec), Catch::StartsWith("test.toml: ") && Catch::Contains("workers"));
  spec = make_spec({}, 1, 1.0, 2, 2);
  REQUIRE_THAT(refused(spec), Catch::StartsWith("test.toml: ") && Catch::Contains("command"));
  spec = make_spec(echo, 1, 0.0, 2, 2);
  REQUIRE_THAT(refused(spec), Catch::StartsWith("test.toml: ") && Catch::Contains("timeout"));
  spec = make_spec(echo, 1, 1.0, 2, 2);
  spec.declared.descriptor_names.pop_back();
  REQUIRE_THAT(refused(spec), Catch::StartsWith("test.toml: ") && Catch::Contains("names"));
  spec = make_spec({"/nonexistent/worker-program"}, 1, 1.0, 2, 2);
  REQUIRE_THAT(refused(spec), Catch::StartsWith("test.toml: ") &&
                                  Catch::Contains("cannot start worker") &&
                                  Catch::Contains("No such file"));
}

TEST_CASE("a worker that exits at once ends the batch with an error, not a hang") {
  auto problem = open_process_problem(make_spec({"/bin/false"}, 2, 20.0, 2, 2));
  Batch batch = uniform_batch(40, 2, 2, -1.0, 1.0, 1);
  ThreadEvaluator evaluator(problem, 2);
  REQUIRE_THROWS_WITH(evaluator.evaluate(batch), Catch::Contains("keeps exiting"));
  for (unsigned char v : batch.valid) REQUIRE(v != 1);
  // Later batches are refused at once.
  REQUIRE_THROWS_WITH(evaluator.evaluate(batch), Catch::Contains("keeps exiting"));
}

TEST_CASE("a worker that closes its stdin costs no evaluation and does not stop tessera") {
  // Each life of closing_worker.py closes its stdin, answers one request and lingers: the
  // requests still in its pipe are lost, and a write to it would raise SIGPIPE, whose default
  // action would end this test program. The pool must notice, restart it and resend.
  const std::string log = temp_log("closing");
  auto problem =
      open_process_problem(make_spec({kPython, fixture("closing_worker.py")}, 2, 20.0, 3, 2, log));
  Batch batch = uniform_batch(24, 3, 2, -3.0, 3.0, 6);
  ThreadEvaluator evaluator(problem, 2);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) require_fixture_answer(batch, i);
  REQUIRE(counts_of(*problem).empty());
  // At least one worker life per candidate: each was replaced after its one answer.
  REQUIRE(count_lines_with(read_file(log), "answered") >= batch.count);
  fs::remove(log);
}

TEST_CASE("a last answer without its newline before the worker exits still counts") {
  // Each life of this worker answers its first request without a newline and exits.
  const std::string script =
      "import json, os, sys\n"
      "sys.path.insert(0, " +
      std::string("'") + fixture("") +
      "')\n"
      "import fixture_protocol as fp\n"
      "r = json.loads(sys.stdin.readline())\n"
      "sys.stdout.write(fp.answer_line(r['id'], r['genome'], 2))\n";
  auto problem = open_process_problem(make_spec({kPython, "-c", script}, 2, 20.0, 3, 2));
  Batch batch = uniform_batch(12, 3, 2, -3.0, 3.0, 9);
  ThreadEvaluator evaluator(problem, 2);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) require_fixture_answer(batch, i);
  REQUIRE(counts_of(*problem).empty());
}

TEST_CASE("destroying the problem ends and reaps every worker") {
  int status = 0;
  {
    auto problem =
        open_process_problem(make_spec({kPython, fixture("echo_worker.py")}, 3, 20.0, 2, 2));
    Batch batch = uniform_batch(50, 2, 2, -1.0, 1.0, 2);
    ThreadEvaluator evaluator(problem, 2);
    evaluator.evaluate(batch);
    REQUIRE(::waitpid(-1, &status, WNOHANG) == 0);  // children exist and are running
  }
  errno = 0;
  REQUIRE(::waitpid(-1, &status, WNOHANG) == -1);
  REQUIRE(errno == ECHILD);  // no child left, not even a zombie
}

TEST_CASE("a worker that serves scene and trace requests is drawn", "[figures]") {
  constexpr std::size_t kJoints = 7;
  auto spec =
      make_spec({kPython, std::string(TESSERA_SOURCE_DIR) + "/problems/examples/arm_worker.py"}, 2,
                30.0, kJoints, 2);
  auto problem = open_process_problem(spec);
  const auto scene = problem->scene();
  REQUIRE(scene);
  CHECK(scene->note("units") == "arm lengths (total length 1)");
  // The reach circle of an arm of total length 1 about the base (closed form: |p| <= 1).
  bool reach = false;
  for (const auto& item : scene->items)
    if (item.name == "reach")
      reach = item.kind == FigureKind::circles && item.values == std::vector<double>{0, 0, 1};
  CHECK(reach);
  // The traced end joint is the evaluated descriptor, for genomes evaluated in the same run.
  Batch batch = uniform_batch(20, kJoints, 2, -std::numbers::pi, std::numbers::pi, 5);
  ThreadEvaluator evaluator(problem, 2);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) {
    const auto genome = batch.genome(i);
    const auto trace = problem->trace({genome.begin(), genome.end()});
    REQUIRE(trace);
    REQUIRE(trace->items.size() == 1);
    const FigureItem& joints = trace->items[0];
    REQUIRE(joints.rows() == kJoints + 1);
    CHECK(joints.at(0, 1) == 0.0);  // the base
    CHECK(joints.at(0, 2) == 0.0);
    double fitness, x, y;
    arm_closed_form(genome, fitness, x, y);
    CHECK(std::abs(joints.at(kJoints, 1) - batch.descriptor(i)[0]) <= 1e-12);
    CHECK(std::abs(joints.at(kJoints, 2) - batch.descriptor(i)[1]) <= 1e-12);
    CHECK(std::abs(joints.at(kJoints, 1) - x) <= 1e-12);
  }
  CHECK(counts_of(*problem).empty());
}

TEST_CASE("a worker that knows no scene or trace request gives none and keeps working",
          "[figures]") {
  // echo_worker.py reads request["genome"]: a scene or trace request makes it exit (a KeyError).
  auto problem =
      open_process_problem(make_spec({kPython, fixture("echo_worker.py")}, 1, 30.0, 3, 2));
  CHECK_FALSE(problem->scene());
  CHECK_FALSE(problem->trace({0.1, 0.2, 0.3}));
  Batch batch = uniform_batch(16, 3, 2, -4.0, 4.0, 9);
  ThreadEvaluator evaluator(problem, 2);
  evaluator.evaluate(batch);
  for (std::size_t i = 0; i < batch.count; ++i) require_fixture_answer(batch, i);
  // The optional requests it could not serve count as no failed evaluation.
  CHECK(counts_of(*problem).empty());
}
