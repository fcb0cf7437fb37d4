// Overhead per evaluation of the two ways to bring a problem from outside, each
// against an in-process call of the same arm function (plugins/arm/arm_model.hpp, 10 joints):
//   plugin   the arm plugin loaded with dlopen, called through the C ABI in chunks of
//            ThreadEvaluator::kChunk genomes, as the engine does;
//   process  external worker processes answering at once over the JSON line protocol. The worker
//            is this program run with --worker (compiled C++: it parses the request with
//            nlohmann-json, evaluates, prints the answer), so the figure is the protocol's cost
//            (pipes, JSON both ways, scheduling), not an interpreter's;
//   python   for scale, problems/examples/arm_worker.py under /usr/bin/python3 (if present).
// Everything runs on one thread of tessera (plus the workers). Each figure is the median of
// several repeats; ratios are taken within this run. Usage: bench_process_overhead [--quick].
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <functional>
#include <iostream>
#include <nlohmann/json.hpp>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "arm/arm_model.hpp"
#include "eval/process_problem.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/plugin_problem.hpp"

using namespace tessera;

namespace {

constexpr std::size_t kJoints = 10;

// Worker mode: the line protocol of arm_worker.py, in C++.
int run_worker() {
  std::ios::sync_with_stdio(false);
  std::string line;
  std::vector<double> genome;
  while (std::getline(std::cin, line)) {
    const auto request = nlohmann::json::parse(line);
    genome = request["genome"].get<std::vector<double>>();
    double fitness = 0.0;
    double descriptor[2];
    arm::evaluate(genome.data(), genome.size(), fitness, descriptor);
    nlohmann::ordered_json answer;
    answer["id"] = request["id"];
    answer["fitness"] = fitness;
    answer["descriptor"] = {descriptor[0], descriptor[1]};
    std::cout << answer.dump() << '\n' << std::flush;  // one write per answer, as a worker must
  }
  return 0;
}

std::string self_path() {
  return std::filesystem::read_symlink("/proc/self/exe").string();
}

double median(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  const std::size_t n = values.size();
  return n % 2 ? values[n / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
}

// Median over `repeats` of the seconds per evaluation of `run` over `count` genomes.
double per_evaluation(int repeats, std::size_t count, const std::function<void()>& run) {
  std::vector<double> times;
  for (int r = 0; r < repeats; ++r) {
    const auto start = std::chrono::steady_clock::now();
    run();
    times.push_back(
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() /
        static_cast<double>(count));
  }
  return median(times);
}

Batch arm_batch(std::size_t count) {
  Batch batch;
  batch.resize(count, kJoints, 2, 0);
  std::mt19937_64 rng(1);
  std::uniform_real_distribution<double> angle(-std::numbers::pi, std::numbers::pi);
  for (double& g : batch.genomes) g = angle(rng);
  return batch;
}

ProblemSpec arm_process_spec(std::vector<std::string> command, std::size_t workers) {
  ProblemSpec spec;
  spec.kind = "process";
  spec.name = "arm-process";
  spec.source = "bench";
  spec.command = std::move(command);
  spec.workers = workers;
  spec.timeout_seconds = 60.0;
  spec.declared.name = spec.name;
  spec.declared.genome = {std::vector<double>(kJoints, arm::kAngleLower),
                          std::vector<double>(kJoints, arm::kAngleUpper)};
  spec.declared.descriptor = {{-1.0, -1.0}, {1.0, 1.0}};
  spec.declared.descriptor_names = {"x", "y"};
  spec.declared.fitness_lower = arm::kFitnessLower;
  spec.declared.fitness_upper = arm::kFitnessUpper;
  return spec;
}

void print_row(const char* what, double seconds, double baseline) {
  std::printf("%-34s %10.3f us/eval   x%9.1f in-process   overhead %9.3f us/eval\n", what,
              seconds * 1e6, seconds / baseline, (seconds - baseline) * 1e6);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc > 1 && std::strcmp(argv[1], "--worker") == 0) return run_worker();
  const bool quick = argc > 1 && std::strcmp(argv[1], "--quick") == 0;
  const int repeats = quick ? 3 : 7;
  const std::size_t fast_count = quick ? 100000 : 1000000;  // in-process and plugin
  const std::size_t slow_count = quick ? 5000 : 30000;      // through processes
  constexpr std::size_t chunk = ThreadEvaluator::kChunk;

  std::printf("arm, %zu joints; medians of %d repeats; one tessera thread\n", kJoints, repeats);

  // In-process: the model function called directly, chunk by chunk like the engine.
  Batch fast = arm_batch(fast_count);
  const double direct = per_evaluation(repeats, fast_count, [&] {
    for (std::size_t first = 0; first < fast.count; first += chunk)
      for (std::size_t k = first; k < std::min(fast.count, first + chunk); ++k) {
        double* d = fast.descriptors.data() + 2 * k;
        arm::evaluate(fast.genomes.data() + k * kJoints, kJoints, fast.fitness[k], d);
        fast.valid[k] = 1;
      }
  });
  print_row("in-process call", direct, direct);

  const std::string plugin_path = std::string(TESSERA_PLUGIN_DIR) + "/tessera-plugin-arm.so";
  if (std::filesystem::exists(plugin_path)) {
    auto plugin = load_plugin_problem(plugin_path, "");
    auto instance = plugin->make_instance();
    const double through_plugin = per_evaluation(repeats, fast_count, [&] {
      for (std::size_t first = 0; first < fast.count; first += chunk)
        instance->evaluate(fast, first, std::min(chunk, fast.count - first));
    });
    print_row("plugin call (dlopen, C ABI)", through_plugin, direct);
  } else {
    std::printf("plugin call: %s not built, skipped\n", plugin_path.c_str());
  }

  // Processes: one tessera thread hands chunks to the pool, as ThreadEvaluator with 1 thread.
  Batch slow = arm_batch(slow_count);
  for (std::size_t workers : {1, 2}) {
    auto problem = open_process_problem(arm_process_spec({self_path(), "--worker"}, workers));
    ThreadEvaluator evaluator(problem, 1);
    const double through_process =
        per_evaluation(repeats, slow_count, [&] { evaluator.evaluate(slow); });
    const std::string label = "process, C++ worker x" + std::to_string(workers);
    print_row(label.c_str(), through_process, direct);
  }
  // CMake compiles with absolute paths, so __FILE__ locates the source tree.
  const std::string python_worker = (std::filesystem::path(__FILE__).parent_path().parent_path() /
                                     "problems/examples" / "arm_worker.py")
                                        .string();
  if (::access("/usr/bin/python3", X_OK) == 0 && std::filesystem::exists(python_worker)) {
    auto problem = open_process_problem(arm_process_spec({"/usr/bin/python3", python_worker}, 1));
    ThreadEvaluator evaluator(problem, 1);
    const std::size_t count = slow_count / 5;
    Batch python_batch = arm_batch(count);
    const double through_python =
        per_evaluation(repeats, count, [&] { evaluator.evaluate(python_batch); });
    print_row("process, Python+numpy worker x1", through_python, direct);
  }
  return 0;
}
