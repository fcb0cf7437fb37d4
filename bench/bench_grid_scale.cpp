// Large-grid throughput: MAP-Elites on the arm (10 joints, batch 1024, 2,000,000 evaluations,
// 2 threads) over a 1000 x 1000 grid against the same run over a 100 x 100 grid, each timed
// with its final archive write (as a run ends), as the ratio of their rates (aim >= 0.5). The
// large grid holds most of a million elites, so parent reads and insertion miss the caches.
// Medians of repeats (default 5).
// Usage: bench_grid_scale [REPEATS [THREADS]]
#include <stdlib.h>
#include <tbb/global_control.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <vector>

#include "core/search/map_elites.hpp"
#include "core/search/variation.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/thread_evaluator.hpp"
#include "io/archive_file.hpp"
#include "problems/registry.hpp"

#include "arm_search.hpp"
#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

using namespace tessera;

namespace {

constexpr std::size_t kBatch = 1024;
constexpr std::uint64_t kEvaluations = 2'000'000;

struct Timing {
  double loop = 0.0;   // seconds in the search loop
  double write = 0.0;  // seconds to snapshot and write the final archive
  std::size_t elites = 0;
};

Timing run(const std::shared_ptr<Problem>& problem, std::int64_t side, std::size_t threads,
           const std::string& path) {
  tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
  auto search = tessera::bench::arm_search(problem, threads, kBatch, kEvaluations, side);
  Timing t;
  auto start = std::chrono::steady_clock::now();
  while (!search->finished()) search->step();
  t.loop = seconds_since(start);
  start = std::chrono::steady_clock::now();
  ArchiveSnapshot snapshot;
  snapshot.problem = "arm";
  snapshot.config = "[problem]\nname = \"arm\"\n";
  snapshot.tool_version = "bench";
  search->save(snapshot);
  write_archive_file(path, snapshot);
  t.write = seconds_since(start);
  t.elites = search->archive().size();
  return t;
}

}  // namespace

int main(int argc, char** argv) {
  const int repeats = argc > 1 ? std::atoi(argv[1]) : 5;
  const std::size_t threads = argc > 2 ? static_cast<std::size_t>(std::atoi(argv[2])) : 2;
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 0);
  auto problem = open_plugin_problem("arm", "joints = 10");
  const auto path = std::filesystem::temp_directory_path() /
                    ("tessera-bench-grid-" + std::to_string(::getpid()) + ".h5");
  std::setvbuf(stdout, nullptr, _IOLBF, 0);  // figures appear as they are measured
  double load[3] = {0, 0, 0};
  if (::getloadavg(load, 3) == 3)
    std::printf("load averages at start (uptime): %.2f %.2f %.2f\n", load[0], load[1], load[2]);

  std::vector<double> small_loop, small_all, large_loop, large_all;
  std::size_t small_elites = 0, large_elites = 0;
  for (int r = 0; r < repeats; ++r) {
    const Timing a = run(problem, 100, threads, path.string());
    const Timing b = run(problem, 1000, threads, path.string());
    small_loop.push_back(kEvaluations / a.loop);
    small_all.push_back(kEvaluations / (a.loop + a.write));
    large_loop.push_back(kEvaluations / b.loop);
    large_all.push_back(kEvaluations / (b.loop + b.write));
    small_elites = a.elites;
    large_elites = b.elites;
  }
  std::filesystem::remove(path);
  std::printf("arm, 10 joints, batch %zu, %llu evaluations, %zu threads, median of %d runs\n",
              kBatch, static_cast<unsigned long long>(kEvaluations), threads, repeats);
  std::printf("  100 x 100 grid    %7zu elites   loop %10.0f /s   with final write %10.0f /s\n",
              small_elites, median(small_loop), median(small_all));
  std::printf("  1000 x 1000 grid  %7zu elites   loop %10.0f /s   with final write %10.0f /s\n",
              large_elites, median(large_loop), median(large_all));
  std::printf("  1000x1000 rate / 100x100 rate: loop %.2f, with final write %.2f (aim >= 0.5)\n",
              median(large_loop) / median(small_loop), median(large_all) / median(small_all));
  if (::getloadavg(load, 3) == 3)
    std::printf("load averages at end (uptime): %.2f %.2f %.2f\n", load[0], load[1], load[2]);
  return 0;
}
