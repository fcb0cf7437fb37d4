// Builds a runnable search from a run configuration: opens the problem, builds the descriptor
// space (grid, or CVT from the cache), the evaluator and the algorithm. Shared by `illuminate`
// and `resume`, so both make exactly the same search from the same configuration.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <string>

#include "core/search/search.hpp"
#include "core/archive/snapshot.hpp"
#include "eval/cluster.hpp"
#include "eval/thread_evaluator.hpp"
#include "io/run_file.hpp"
#include "problems/problem.hpp"

namespace tessera::cli {

struct PreparedRun {
  RunConfig config;
  std::shared_ptr<const Problem> problem;
  std::shared_ptr<ThreadEvaluator> evaluator;
  std::unique_ptr<SearchAlgorithm> search;
  std::string space_note;  // e.g. "CVT centroids from cache"
  // Failed evaluations by reason before this process started (resume adds to them).
  std::map<std::string, std::uint64_t> earlier_failures;
};

// `saved` (when resuming) supplies the space stored in the archive instead of building it.
PreparedRun prepare_run(RunConfig config, std::size_t threads, const std::string& log_path,
                        const ArchiveSnapshot* saved = nullptr);

// Evaluator ranks under mpirun open the problem from the coordinator's resolved run file.
std::shared_ptr<const Problem> open_worker_problem(const cluster::WorkerSetup& setup);

// The snapshot of the run as it stands: root attributes, space, elites, history, resume state.
ArchiveSnapshot snapshot_of(const PreparedRun& run);

}  // namespace tessera::cli
