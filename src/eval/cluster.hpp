// Distributed evaluation over MPI. Under `mpirun -n N tessera ...`, rank 0 is the coordinator
// (archive, emitters, checkpoints, progress) and ranks 1..N-1 are evaluators, each with its own
// threads. Work goes out in chunks with dynamic balancing (a rank that finishes early gets the
// next chunk); genomes and results travel as packed doubles and land at the candidate's own
// index, so the result is bit-identical to a single-process run whatever N.
// Without mpirun, or in a build without MPI, every function here is a no-op and active() is false.
#pragma once

#include <cstddef>
#include <functional>
#include <memory>
#include <string>

#include "core/search/search.hpp"
#include "problems/problem.hpp"

namespace tessera::cluster {

// What an evaluator rank needs to open the problem itself: the resolved run file, the folder
// relative paths resolve against, the workers' log file and the threads per rank.
struct WorkerSetup {
  std::string config_text;
  std::string base_dir;
  std::string log_path;
  std::size_t threads = 0;
};

using ProblemOpener = std::function<std::shared_ptr<const Problem>(const WorkerSetup&)>;

// Starts MPI when the process was launched by mpirun (or srun); call first thing in main.
void init(int* argc, char*** argv);
bool built_with_mpi();
bool active();  // launched with more than one rank
int rank();
int size();

// Evaluator ranks: serve batches until the coordinator says stop. Returns the exit code.
int serve(const ProblemOpener& open);

// Coordinator: an EvaluateFn spreading each batch over the evaluator ranks (all of them, or
// the first `evaluator_ranks`, for benchmarks). The first call sends `setup` to every rank.
EvaluateFn distributed_evaluator(WorkerSetup setup, int evaluator_ranks = 0);

// Coordinator: tells the evaluator ranks to stop, then finalises MPI. Safe to call twice.
void finish();

}  // namespace tessera::cluster
