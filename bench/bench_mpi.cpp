// MPI evaluation figures, measured in one run. Launch with
//   mpirun -n 3 build/bench/bench_mpi        (rank 0 coordinates, ranks 1-2 evaluate)
// Prints: (1) per-evaluation overhead of the MPI path on the cheap arm problem against threads
// alone (two evaluator ranks x 1 thread against 2 threads in one process); (2) for a problem
// with 10 ms evaluations, the efficiency of 2 evaluator ranks against 1; (3) a projection to 64
// and 1024 ranks from a stated model with the measured message overhead. Medians of repeats.

#include <tbb/global_control.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <vector>

#include "core/search/map_elites.hpp"
#include "core/base/rng.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/cluster.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/registry.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

using namespace tessera;
using clock_type = std::chrono::steady_clock;

namespace {


// The bench's own "run file": NAME, a newline, then the plugin options.
std::shared_ptr<const Problem> open_named(const cluster::WorkerSetup& s) {
  const auto nl = s.config_text.find('\n');
  return open_plugin_problem(s.config_text.substr(0, nl), s.config_text.substr(nl + 1));
}

Batch random_batch(const ProblemInfo& info, std::size_t count, std::uint64_t seed) {
  Batch b;
  b.resize(count, info.genome_size(), info.descriptor_size(), info.extra_names.size());
  for (std::size_t i = 0; i < count; ++i) {
    Rng rng(seed, i);
    for (std::size_t j = 0; j < info.genome_size(); ++j)
      b.genomes[i * info.genome_size() + j] = rng.uniform(info.genome.lower[j], info.genome.upper[j]);
  }
  return b;
}

// Seconds per evaluation of `evaluate` over `batches` batches of `size`.
double seconds_per_evaluation(const EvaluateFn& evaluate, const ProblemInfo& info,
                              std::size_t size, int batches) {
  std::vector<Batch> work;
  for (int b = 0; b < batches; ++b) work.push_back(random_batch(info, size, static_cast<std::uint64_t>(b)));
  const auto start = clock_type::now();
  for (auto& batch : work) evaluate(batch);
  return seconds_since(start) / static_cast<double>(size * static_cast<std::size_t>(batches));
}

}  // namespace

int main(int argc, char** argv) {
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR ":" TESSERA_TEST_PLUGIN_DIR, 0);
  try {
    cluster::init(&argc, &argv);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bench_mpi: %s\n", e.what());
    return 1;
  }
  if (!cluster::active()) {
    std::fprintf(stderr, "run under mpirun with at least 3 ranks: mpirun -n 3 %s\n", argv[0]);
    return 2;
  }
  if (cluster::rank() != 0) return cluster::serve(open_named);
  const int evaluators = cluster::size() - 1;
  const int repeats = 5;

  // (1) Cheap problem: overhead per evaluation of the MPI path against threads alone.
  auto arm = open_plugin_problem("arm", "");
  std::vector<double> threads_s, mpi_s;
  {
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, 2);
    ThreadEvaluator local(arm, 2);
    auto mpi = cluster::distributed_evaluator({"arm\n", "", "", 1});
    for (int r = 0; r < repeats; ++r) {
      threads_s.push_back(seconds_per_evaluation([&](Batch& b) { local.evaluate(b); }, arm->info(), 1024, 200));
      mpi_s.push_back(seconds_per_evaluation(mpi, arm->info(), 1024, 200));
    }
  }
  const double t_threads = median(threads_s), t_mpi = median(mpi_s);
  std::printf("arm (cheap), batch 1024, %d evaluator ranks x 1 thread vs 2 threads in one process:\n", evaluators);
  std::printf("  threads alone %.3f us/evaluation, MPI path %.3f us/evaluation, overhead %.3f us "
              "(ratio %.1fx)\n", 1e6 * t_threads, 1e6 * t_mpi, 1e6 * (t_mpi - t_threads), t_mpi / t_threads);

  // Message overhead at the coordinator: round trips of one-candidate chunks.
  std::vector<double> chunk_s;
  {
    auto mpi1 = cluster::distributed_evaluator({"arm\n", "", "", 1}, 1);
    for (int r = 0; r < repeats; ++r) chunk_s.push_back(seconds_per_evaluation(mpi1, arm->info(), 1, 2000));
  }
  const double round_trip = median(chunk_s);
  std::printf("  round trip of a one-candidate chunk (rank 0 <-> rank 1): %.1f us\n", 1e6 * round_trip);

  // (2) 10 ms evaluations: efficiency of 2 evaluator ranks against 1.
  double efficiency = 0;
  if (evaluators >= 2) {
    auto slow1 = cluster::distributed_evaluator({"sleepy-arm\nfixed_delay_ms = 10.0", "", "", 1}, 1);
    auto slow2 = cluster::distributed_evaluator({"sleepy-arm\nfixed_delay_ms = 10.0", "", "", 1}, 2);
    auto info = open_plugin_problem("sleepy-arm", "fixed_delay_ms = 10.0")->info();
    std::vector<double> one, two;
    for (int r = 0; r < 3; ++r) {
      one.push_back(seconds_per_evaluation(slow1, info, 64, 2));
      two.push_back(seconds_per_evaluation(slow2, info, 64, 2));
    }
    efficiency = median(one) / median(two) / 2.0;
    std::printf("10 ms evaluations, batch 64: 1 rank %.2f ms/evaluation, 2 ranks %.2f ms/evaluation, "
                "efficiency of 2 ranks %.1f%%\n", 1e3 * median(one), 1e3 * median(two), 100 * efficiency);
  }

  // (3) Projection. Model: batch B, R evaluator ranks, chunk c = ceil(B / 4R) (as the evaluator
  // hands out), evaluation time t, per-chunk message cost m at the coordinator (measured round
  // trip above, messages handled one at a time), coordinator work per candidate s (variation and
  // insertion: arm loop cost minus evaluation, from bench_engine, taken here as 0.3 us).
  // Batch time = max(ceil(B / (R c)) c t, (B / c) m + B s) + m; efficiency = (B t / R) / batch time.
  const double t = 0.010, s = 0.3e-6, m = round_trip;
  std::printf("projection (t = 10 ms, m = %.1f us measured, s = 0.3 us):\n", 1e6 * m);
  for (int B : {1024, 8192, 65536}) {
    for (int R : {64, 1024}) {
      const double c = std::ceil(static_cast<double>(B) / (4.0 * R));
      const double rounds = std::ceil(B / (R * c));
      const double compute = rounds * c * t;
      const double coordinator = (B / c) * m + B * s;
      const double batch_time = std::max(compute, coordinator) + m;
      std::printf("  batch %6d, %4d ranks: chunk %4.0f, batch time %.3f s, efficiency %.1f%%\n", B, R,
                  c, batch_time, 100.0 * (B * t / R) / batch_time);
    }
  }
  cluster::finish();
  return 0;
}
