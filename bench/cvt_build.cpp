// CVT construction figures: time to build 10,000 centroids in 6-D (a reference size of ours)
// with 1 and 2 threads, and the per-query cost of the k-d tree against a plain scan for a few
// centroid counts (which sets NearestCentroid::scan_limit). Medians of a few repeats.
#include <tbb/global_control.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <vector>

#include "core/archive/cvt.hpp"
#include "core/archive/nearest.hpp"
#include "core/base/rng.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

namespace {

using Clock = std::chrono::steady_clock;



// Nanoseconds per query of the k-d tree and of the scan over the same centroids.
void query_costs(std::size_t dims, std::size_t k) {
  using Method = tessera::NearestCentroid::Method;
  tessera::Rng rng(7, k, dims);
  std::vector<double> centroids(k * dims), queries(200000 * dims);
  for (auto& v : centroids) v = rng.uniform();
  for (auto& v : queries) v = rng.uniform();
  double ns[2];
  std::uint64_t sink = 0;
  for (Method method : {Method::tree, Method::scan}) {
    const tessera::NearestCentroid index(centroids, dims, method);
    std::vector<double> times;
    for (int rep = 0; rep < 3; ++rep) {
      const auto t0 = Clock::now();
      for (std::size_t i = 0; i < queries.size(); i += dims) sink += index.nearest(&queries[i]);
      times.push_back(seconds_since(t0) * 1e9 / 200000.0);
    }
    ns[method == Method::tree ? 0 : 1] = median(times);
  }
  std::printf("  D=%zu K=%6zu  tree %7.1f ns/query  scan %8.1f ns/query  -> %s%s\n", dims, k, ns[0],
              ns[1], k > tessera::NearestCentroid::scan_limit(dims) ? "tree" : "scan",
              sink == 1 ? " " : "");
  std::fflush(stdout);
}

}  // namespace

int main(int argc, char** argv) {
  const int repeats = argc > 1 ? std::atoi(argv[1]) : 3;
  std::printf("nearest-centroid query cost (median of 3):\n");
  for (std::size_t dims : {2, 4, 6})
    for (std::size_t k : {16, 32, 64, 128, 256, 1000, 10000}) query_costs(dims, k);

  tessera::Bounds box{std::vector<double>(6, 0.0), std::vector<double>(6, 1.0)};
  tessera::CvtSettings settings;
  settings.cells = 10000;
  std::printf("CVT 10000 cells, 6-D, %lld samples, %d iterations (median of %d):\n",
              static_cast<long long>(settings.effective_samples()), settings.iterations, repeats);
  // Wall time is what a user waits; processor time (all threads) shows the work when the machine
  // is shared.
  double t1 = 0.0;
  for (int threads : {1, 2}) {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
    std::vector<double> times, cpu;
    for (int rep = 0; rep < repeats; ++rep) {
      const auto t0 = Clock::now();
      const std::clock_t c0 = std::clock();
      const auto c = tessera::tessellate_descriptor_box(box, settings);
      times.push_back(seconds_since(t0));
      cpu.push_back(static_cast<double>(std::clock() - c0) / CLOCKS_PER_SEC);
    }
    const double t = median(times);
    if (threads == 1) t1 = t;
    std::printf("  %d thread(s): %.2f s wall, %.2f s processor  (wall speed-up %.2f)\n", threads, t,
                median(cpu), t1 / t);
    std::fflush(stdout);
  }
  return 0;
}
