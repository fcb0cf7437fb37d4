// Query latency of `tessera query`'s search for 100,000 elites in 6-D (uniform random data):
// k-d tree (NearestElites::nearest) against a plain scan (nearest_by_scan), single thread, for
// k = 1 and k = 10, plus the time to build the tree once per call. Medians of 5 repeats.
// Usage: bench_query [elites] [dims]
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <numeric>
#include <vector>

#include "core/select/query.hpp"
#include "core/base/rng.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

namespace {

using Clock = std::chrono::steady_clock;



}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoul(argv[1], nullptr, 10) : 100000;
  const std::size_t d = argc > 2 ? std::strtoul(argv[2], nullptr, 10) : 6;
  tessera::Rng rng(2024, n, d);
  tessera::Bounds bounds;
  for (std::size_t i = 0; i < d; ++i) {
    bounds.lower.push_back(-1.0 * (i + 1));
    bounds.upper.push_back(2.0 * (i + 1));
  }
  std::vector<double> descriptors(n * d);
  for (std::size_t e = 0; e < n; ++e)
    for (std::size_t i = 0; i < d; ++i)
      descriptors[e * d + i] = rng.uniform(bounds.lower[i], bounds.upper[i]);
  std::vector<std::size_t> rows(n);
  std::iota(rows.begin(), rows.end(), std::size_t{0});

  std::vector<double> build_s;
  for (int rep = 0; rep < 5; ++rep) {
    const auto t0 = Clock::now();
    const tessera::NearestElites index(descriptors, bounds, rows);
    build_s.push_back(seconds_since(t0));
  }
  const tessera::NearestElites index(descriptors, bounds, rows);

  const std::size_t tree_queries = 20000, scan_queries = 200;
  std::vector<double> targets(tree_queries * d);
  for (std::size_t q = 0; q < tree_queries; ++q)
    for (std::size_t i = 0; i < d; ++i)
      targets[q * d + i] = rng.uniform(bounds.lower[i], bounds.upper[i]);

  std::printf("nearest-elite query, %zu elites, %zu-D, single thread (median of 5)\n", n, d);
  std::printf("  tree build: %.1f ms\n", median(build_s) * 1e3);
  std::size_t sink = 0;
  for (std::size_t k : {std::size_t{1}, std::size_t{10}}) {
    std::vector<double> tree_us, scan_us;
    bool same = true;
    for (int rep = 0; rep < 5; ++rep) {
      auto t0 = Clock::now();
      for (std::size_t q = 0; q < tree_queries; ++q)
        sink += index.nearest({&targets[q * d], d}, k).front().elite;
      tree_us.push_back(seconds_since(t0) * 1e6 / tree_queries);
      t0 = Clock::now();
      for (std::size_t q = 0; q < scan_queries; ++q)
        sink += index.nearest_by_scan({&targets[q * d], d}, k).front().elite;
      scan_us.push_back(seconds_since(t0) * 1e6 / scan_queries);
    }
    for (std::size_t q = 0; q < scan_queries; ++q) {
      const auto a = index.nearest({&targets[q * d], d}, k);
      const auto b = index.nearest_by_scan({&targets[q * d], d}, k);
      for (std::size_t r = 0; r < k; ++r) same = same && a[r].elite == b[r].elite;
    }
    const double t = median(tree_us), s = median(scan_us);
    std::printf(
        "  k=%-2zu  k-d tree %8.2f us/query   scan %9.1f us/query   scan/tree %7.0fx  "
        "(answers %s)\n",
        k, t, s, s / t, same ? "identical" : "DIFFER");
  }
  std::printf("  [%zu]\n", sink % 7);
  return 0;
}
