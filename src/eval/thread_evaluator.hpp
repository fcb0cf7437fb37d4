// Evaluates batches in parallel on one machine: TBB splits a batch into fixed chunks, each chunk
// is evaluated by a problem instance owned by one worker thread. Results land at the candidate's
// own index, so the outcome never depends on the number of threads.
#pragma once

#include <atomic>
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
  // threads at once on disjoint ranges (each uses an instance no other call holds).
  void evaluate_range(Batch& batch, std::size_t first, std::size_t count);

  std::size_t threads() const { return threads_; }
  const Problem& problem() const { return *problem_; }

  // Smallest number of candidates handed to one instance call.
  static constexpr std::size_t kChunk = 16;

 private:
  class Lease;
  // Each TBB thread slot keeps an instance of its own, taken without a lock (a mutex per chunk
  // showed as 1.7% of a cheap problem's run on two threads); a call that finds its slot's instance
  // in use (another arena's thread with the same index) takes one from the locked pool.
  struct alignas(64) Slot {
    std::atomic<bool> busy{false};
    std::unique_ptr<ProblemInstance> instance;
  };

  std::shared_ptr<const Problem> problem_;
  std::size_t threads_;
  struct Arena;
  std::unique_ptr<Arena> arena_;  // null: the caller's arena already has `threads` threads
  std::unique_ptr<Slot[]> slots_;
  std::size_t slot_count_ = 0;
  std::mutex pool_mutex_;
  std::vector<std::unique_ptr<ProblemInstance>> pool_;  // idle instances, reused across batches
};

}  // namespace tessera
