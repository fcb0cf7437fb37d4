// Linkage problem figures for the two shipped scenarios (problems/linkage-compact.toml and
// problems/linkage-straight-line.toml, both at 360 crank angles per revolution, the default):
//   - evaluations per second on one core through the plugin, over uniform random genomes (the
//     mix a random phase sees: infeasible ones are rejected before the position analysis) and
//     over feasible genomes only (the full analysis, the cost a run pays for most children);
//   - the share of infeasible genomes, by reason, in uniform random sampling of the genome box
//     against the candidates of a MAP-Elites run of the scenario (its children are mostly near
//     feasible elites). Medians of repeats for the rates.
// Usage: bench_linkage [repeats = 5] [run evaluations = 100000]
#include <tbb/global_control.h>

#include <algorithm>
#include <array>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <random>
#include <string>
#include <vector>

#include "core/search/map_elites.hpp"
#include "core/archive/space.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/problem_factory.hpp"
#include "eval/thread_evaluator.hpp"
#include "io/run_file.hpp"
#include "linkage/linkage_model.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

using namespace tessera;
using Clock = std::chrono::steady_clock;

namespace {

constexpr std::size_t kReasons = 6;  // linkage::Reason codes 0..5
const char* kReasonNames[kReasons] = {"feasible",  "not Grashof",       "crank not shortest",
                                      "loop open", "transmission rule", "bad length"};



// Evaluates `genomes` on one instance (one core) in batches of 1024; returns evaluations per
// second and leaves the results in `batch_out` (the last pass).
double rate_one_core(const Problem& problem, const std::vector<double>& genomes, Batch& out) {
  const auto& info = problem.info();
  const std::size_t g = info.genome_size(), n = genomes.size() / g;
  out.resize(n, g, info.descriptor_size(), info.extra_names.size());
  out.genomes = genomes;
  auto instance = problem.make_instance();
  const auto t0 = Clock::now();
  for (std::size_t first = 0; first < n; first += 1024)
    instance->evaluate(out, first, std::min<std::size_t>(1024, n - first));
  return static_cast<double>(n) / seconds_since(t0);
}

void print_reasons(const char* what, const std::array<std::uint64_t, kReasons>& counts) {
  std::uint64_t total = 0;
  for (auto c : counts) total += c;
  std::printf("  %-34s infeasible %5.1f%%  (", what,
              100.0 * static_cast<double>(total - counts[0]) / static_cast<double>(total));
  bool first = true;
  for (std::size_t r = 1; r < kReasons; ++r) {
    if (counts[r] == 0) continue;
    std::printf("%s%s %.1f%%", first ? "" : ", ", kReasonNames[r],
                100.0 * static_cast<double>(counts[r]) / static_cast<double>(total));
    first = false;
  }
  std::printf(")\n");
}

void scenario(const std::string& file, int repeats, std::uint64_t run_evaluations) {
  RunConfig config = load_run_file(file);
  const auto problem = open_problem(config.problem);
  const auto& info = problem->info();
  const std::size_t g = info.genome_size();
  std::printf("%s\n  %s\n", std::filesystem::path(file).filename().c_str(), info.summary.c_str());

  // Uniform genomes over the scenario's genome box.
  const std::size_t n = info.descriptor_size() > 2 ? 20000 : 200000;
  std::mt19937_64 rng(12345);
  std::vector<double> uniform(n * g);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < g; ++j)
      uniform[i * g + j] =
          std::uniform_real_distribution<double>(info.genome.lower[j], info.genome.upper[j])(rng);

  Batch batch;
  std::vector<double> mixed, feasible_rates;
  for (int r = 0; r < repeats; ++r) mixed.push_back(rate_one_core(*problem, uniform, batch));
  std::array<std::uint64_t, kReasons> sampled{};
  std::vector<double> feasible;
  for (std::size_t i = 0; i < n; ++i) {
    ++sampled[static_cast<std::size_t>(batch.extras[i * batch.extra_size])];
    if (batch.valid[i])
      feasible.insert(feasible.end(), uniform.begin() + i * g, uniform.begin() + (i + 1) * g);
  }
  for (int r = 0; r < repeats; ++r)
    feasible_rates.push_back(rate_one_core(*problem, feasible, batch));
  std::printf("  evaluations/s on one core: %9.0f uniform random genomes, %9.0f feasible only\n",
              median(mixed), median(feasible_rates));

  // A run of the scenario, its candidates' reasons tallied as they are evaluated.
  tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 2);
  auto evaluator = std::make_shared<ThreadEvaluator>(problem, 2);
  std::array<std::uint64_t, kReasons> in_run{};
  SearchSettings s = config.search;
  s.evaluations = run_evaluations;
  auto space =
      std::make_shared<GridSpace>(info.descriptor, info.descriptor_names, config.space.resolution);
  MapElitesSearch search(
      s, space, info.genome, info.fitness_lower,
      std::make_unique<VariationEmitter>(config.variation),
      [&](Batch& b) {
        evaluator->evaluate(b);
        for (std::size_t i = 0; i < b.count; ++i)
          ++in_run[static_cast<std::size_t>(b.extras[i * b.extra_size])];
      },
      info.extra_names.size());
  const auto t0 = Clock::now();
  while (!search.finished()) search.step();
  const double run_seconds = seconds_since(t0);
  print_reasons("uniform random sampling:", sampled);
  char what[64];
  std::snprintf(what, sizeof what, "MAP-Elites run (%llu evaluations):",
                static_cast<unsigned long long>(search.counters().evaluations));
  print_reasons(what, in_run);
  const auto f = search.figures();
  std::printf(
      "  run: engine invalid counter %.1f%%, coverage %.1f%%, %zu elites, %.1f s on 2 "
      "threads\n\n",
      100.0 * static_cast<double>(search.counters().invalid) /
          static_cast<double>(search.counters().evaluations),
      100.0 * f.coverage, f.elites, run_seconds);
}

}  // namespace

int main(int argc, char** argv) {
  const int repeats = argc > 1 ? std::max(1, std::atoi(argv[1])) : 5;
  const std::uint64_t run_evaluations = argc > 2 ? std::strtoull(argv[2], nullptr, 10) : 100000;
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 0);
  // The scenarios ship beside this source file.
  const auto problems = std::filesystem::path(__FILE__).parent_path().parent_path() / "problems";
  std::printf("linkage evaluation figures (median of %d repeats)\n\n", repeats);
  for (const char* name : {"linkage-compact.toml", "linkage-straight-line.toml"})
    scenario((problems / name).string(), repeats, run_evaluations);
  return 0;
}
