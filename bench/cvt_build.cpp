// CVT construction figures: time to build 10,000 centroids in 6-D (the reference size)
// with 1 and 2 threads, and the per-query cost of the k-d tree against a plain scan for a few
// centroid counts (which sets NearestCentroid::kScanLimit). Medians of a few repeats.
#include <tbb/global_control.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <vector>

#include "core/cvt.hpp"
#include "core/nearest.hpp"
#include "core/rng.hpp"

namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point t0) {
  return std::chrono::duration<double>(Clock::now() - t0).count();
}

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  return v[v.size() / 2];
}

// Nanoseconds per query: tree (the class as configured) and a forced scan over the same centroids.
void query_costs(std::size_t dims, std::size_t k) {
  tessera::Rng rng(7, k, dims);
  std::vector<double> centroids(k * dims), queries(200000 * dims);
  for (auto& v : centroids) v = rng.uniform();
  for (auto& v : queries) v = rng.uniform();
  const tessera::NearestCentroid index(centroids, dims);
  std::vector<double> tree_ns, scan_ns;
  std::uint64_t sink = 0;
  for (int rep = 0; rep < 3; ++rep) {
    auto t0 = Clock::now();
    for (std::size_t i = 0; i < queries.size(); i += dims) sink += index.nearest(&queries[i]);
    tree_ns.push_back(seconds_since(t0) * 1e9 / 200000.0);
    t0 = Clock::now();
    for (std::size_t i = 0; i < queries.size(); i += dims) {
      double best = 1e300;
      std::uint32_t arg = 0;
      for (std::uint32_t c = 0; c < k; ++c) {
        const double d = index.squared_distance(&queries[i], c);
        if (d < best) best = d, arg = c;
      }
      sink += arg;
    }
    scan_ns.push_back(seconds_since(t0) * 1e9 / 200000.0);
  }
  std::printf("  D=%zu K=%6zu  index %7.1f ns/query (%s)  scan %8.1f ns/query  [%llu]\n", dims, k,
              median(tree_ns), index.uses_tree() ? "tree" : "scan", median(scan_ns),
              static_cast<unsigned long long>(sink % 10));
}

}  // namespace

int main(int argc, char** argv) {
  const int repeats = argc > 1 ? std::atoi(argv[1]) : 3;
  std::printf("nearest-centroid query cost (median of 3):\n");
  for (std::size_t dims : {2, 6})
    for (std::size_t k : {8, 16, 32, 48, 64, 128, 1000, 10000}) query_costs(dims, k);

  tessera::Bounds box{std::vector<double>(6, 0.0), std::vector<double>(6, 1.0)};
  tessera::CvtSettings settings;
  settings.cells = 10000;
  std::printf("CVT 10000 cells, 6-D, %lld samples, %d iterations (median of %d):\n",
              static_cast<long long>(settings.effective_samples()), settings.iterations, repeats);
  double t1 = 0.0;
  for (int threads : {1, 2}) {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
    std::vector<double> times;
    for (int rep = 0; rep < repeats; ++rep) {
      const auto t0 = Clock::now();
      const auto c = tessera::compute_cvt_centroids(box, settings);
      times.push_back(seconds_since(t0));
    }
    const double t = median(times);
    if (threads == 1) t1 = t;
    std::printf("  %d thread(s): %.2f s  (speed-up %.2f)\n", threads, t, t1 / t);
  }
  return 0;
}
