// Gait problem and recovery figures: MuJoCo evaluations per second per core and the
// simulator's real-time factor; the time to build a repertoire of 100,000 evaluations on this
// machine (measured with every core through the thread evaluator); the adaptation overhead per
// trial (GP update + UCB choice) for a map of 10,000 cells, against one simulated and one
// physical trial. Medians of repeats; CPU time is shown beside wall time because the machine may
// be shared. usage: bench_gait [GENOMES_PER_REPEAT (default 100)]
#include <stdlib.h>
#include <tbb/global_control.h>
#include <tbb/info.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <exception>
#include <filesystem>
#include <memory>
#include <vector>

#include "core/models/adaptation.hpp"
#include "core/base/rng.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/registry.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

namespace {

using Clock = std::chrono::steady_clock;



tessera::Batch random_batch(const tessera::ProblemInfo& info, std::size_t n, std::uint64_t key) {
  tessera::Batch batch;
  batch.resize(n, info.genome_size(), info.descriptor_size(), info.extra_names.size());
  tessera::Rng rng(11, key);
  for (auto& g : batch.genomes) g = rng.uniform();
  return batch;
}

// Seconds per simulated trial (one core), or 0 when the gait plugin is not built.
double gait_figures(std::size_t genomes) {
  if (!std::filesystem::exists(std::string(TESSERA_PLUGIN_DIR) + "/tessera-plugin-gait.so")) {
    std::printf("gait plugin not built (no MuJoCo): simulation figures skipped\n");
    return 0.0;
  }
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 1);
  const auto problem = tessera::open_plugin_problem("gait", "");
  const auto& info = problem->info();
  const double simulated = 3.0;  // default duration, seconds

  // One core: one instance, genomes one after the other.
  auto instance = problem->make_instance();
  std::vector<double> wall, cpu;
  for (int rep = 0; rep < 3; ++rep) {
    auto batch = random_batch(info, genomes, static_cast<std::uint64_t>(rep));
    const auto t0 = Clock::now();
    const std::clock_t c0 = std::clock();
    instance->evaluate(batch, 0, genomes);
    wall.push_back(seconds_since(t0) / static_cast<double>(genomes));
    cpu.push_back(static_cast<double>(std::clock() - c0) / CLOCKS_PER_SEC /
                  static_cast<double>(genomes));
  }
  const double per_eval = median(wall), per_eval_cpu = median(cpu);
  std::printf("gait evaluation (3 s simulated, 600 steps of 5 ms), one core, median of 3 x %zu:\n",
              genomes);
  std::printf(
      "  %.2f ms wall (%.2f ms CPU) per evaluation: %.0f evaluations/s/core "
      "(%.0f by CPU time)\n",
      per_eval * 1e3, per_eval_cpu * 1e3, 1.0 / per_eval, 1.0 / per_eval_cpu);
  std::printf("  real-time factor %.0fx (simulated seconds per wall second)\n",
              simulated / per_eval);

  // Every core through the thread evaluator, as `illuminate` runs it.
  const std::size_t cores = tbb::info::default_concurrency();
  tbb::global_control limit(tbb::global_control::max_allowed_parallelism, cores);
  tessera::ThreadEvaluator evaluator(problem, cores);
  std::vector<double> batch_wall;
  const std::size_t batch_size = std::max<std::size_t>(genomes * cores, 64);
  for (int rep = 0; rep < 3; ++rep) {
    auto batch = random_batch(info, batch_size, 100 + static_cast<std::uint64_t>(rep));
    const auto t0 = Clock::now();
    evaluator.evaluate(batch);
    batch_wall.push_back(seconds_since(t0) / static_cast<double>(batch_size));
  }
  const double per_eval_all = median(batch_wall);
  std::printf("  %zu threads: %.0f evaluations/s (%.2fx one core)\n", cores, 1.0 / per_eval_all,
              per_eval / per_eval_all);
  const double projected = 100000.0 * per_eval_all;
  std::printf("  projected repertoire of 100,000 evaluations on this machine: %.0f s (%.1f min)\n",
              projected, projected / 60.0);
  // On a shared machine wall time includes other people's work; CPU time shows what free cores
  // would give.
  const double free_cores = 100000.0 * per_eval_cpu / static_cast<double>(cores);
  std::printf("  with %zu free cores (from CPU time): %.0f s (%.1f min)\n", cores, free_cores,
              free_cores / 60.0);
  return per_eval;
}

void adaptation_figures(double simulated_trial) {
  // A 10,000-cell map in the 6-D duty-factor box with random priors; 20 trials whose measured
  // values are the prior minus a random loss, so the loop never stops early.
  const std::size_t cells = 10000, dims = 6, trials = 20;
  tessera::Rng rng(5, 1);
  std::vector<double> points(cells * dims), prior(cells);
  for (auto& p : points) p = rng.uniform();
  for (auto& p : prior) p = rng.uniform(0.0, 0.8);
  std::vector<double> per_trial;
  for (int rep = 0; rep < 3; ++rep) {
    tessera::AdaptSettings settings;
    settings.max_trials = trials;
    settings.stop_gap = 0.0;  // only the map's best itself would stop the loop
    const auto t0 = Clock::now();
    tessera::TrialAndError loop(points, dims, prior, settings);
    const double setup = seconds_since(t0);
    std::vector<double> steps;
    for (std::size_t t = 0; t < trials; ++t) {
      const auto t1 = Clock::now();
      const auto next = loop.next();
      if (!next) break;
      loop.record(*next, prior[*next] - rng.uniform(0.3, 0.8));
      steps.push_back(seconds_since(t1));
    }
    per_trial.push_back(median(steps));
    if (rep == 0)
      std::printf("adaptation over %zu cells (6-D): set-up %.2f ms\n", cells, setup * 1e3);
  }
  const double overhead = median(per_trial);
  std::printf("  GP update + UCB choice: %.2f ms per trial (median over %zu trials, 3 repeats)\n",
              overhead * 1e3, trials);
  if (simulated_trial > 0.0)
    std::printf("  = %.2f simulated trials, %.5f of a 3 s physical trial\n",
                overhead / simulated_trial, overhead / 3.0);
  else
    std::printf("  = %.5f of a 3 s physical trial\n", overhead / 3.0);
}

}  // namespace

int main(int argc, char** argv) {
  try {
    const std::size_t genomes = argc > 1 ? std::strtoul(argv[1], nullptr, 10) : 100;
    const double per_eval = gait_figures(std::max<std::size_t>(genomes, 1));
    adaptation_figures(per_eval);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bench_gait: %s\n", e.what());
    return 1;
  }
  return 0;
}
