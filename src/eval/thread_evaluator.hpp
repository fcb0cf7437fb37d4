// Evaluates batches in parallel on one machine: TBB splits a batch into fixed chunks, each chunk
// is evaluated by a problem instance owned by one worker thread. Results land at the candidate's
// own index, so the outcome never depends on the number of threads.
#pragma once

#include <cstddef>
#include <memory>
#include <mutex>
#include <vector>

#include "core/base/types.hpp"
#include "problems/problem.hpp"

namespace tessera {

class ThreadEvaluator {
 public:
  // threads = 0 picks the number of cores.
  ThreadEvaluator(std::shared_ptr<const Problem> problem, std::size_t threads);
  ~ThreadEvaluator();

  // Fills fitness, descriptors, valid and extras of every candidate of the batch.
  void evaluate(Batch& batch);
  // The same for candidates [first, first + count), on the calling thread; safe from several
  // threads at once on disjoint ranges (each takes its own instance from the pool).
  void evaluate_range(Batch& batch, std::size_t first, std::size_t count);

  std::size_t threads() const { return threads_; }
  const Problem& problem() const { return *problem_; }

  // Smallest number of candidates handed to one instance call.
  static constexpr std::size_t kChunk = 16;

 private:
  std::unique_ptr<ProblemInstance> acquire();
  void release(std::unique_ptr<ProblemInstance> instance);

  std::shared_ptr<const Problem> problem_;
  std::size_t threads_;
  struct Arena;
  std::unique_ptr<Arena> arena_;  // null: the caller's arena already has `threads` threads
  std::mutex pool_mutex_;
  std::vector<std::unique_ptr<ProblemInstance>> pool_;  // idle instances, reused across batches
};

}  // namespace tessera
