#include "eval/thread_evaluator.hpp"

#include <tbb/blocked_range.h>
#include <tbb/global_control.h>
#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <exception>
#include <stdexcept>
#include <thread>

namespace tessera {

struct ThreadEvaluator::Arena {
  explicit Arena(int threads) : arena(threads) {}
  tbb::task_arena arena;
};

ThreadEvaluator::ThreadEvaluator(std::shared_ptr<const Problem> problem, std::size_t threads)
    : problem_(std::move(problem)),
      threads_(threads == 0 ? std::max(1u, std::thread::hardware_concurrency()) : threads) {
  // An arena of its own only when the caller's has another size: entering a second arena moves
  // the worker threads across on every batch, which costs more than a batch of cheap evaluations.
  const auto caller = std::min<std::size_t>(
      static_cast<std::size_t>(tbb::this_task_arena::max_concurrency()),
      tbb::global_control::active_value(tbb::global_control::max_allowed_parallelism));
  if (caller != threads_) arena_ = std::make_unique<Arena>(static_cast<int>(threads_));
}

ThreadEvaluator::~ThreadEvaluator() = default;

std::unique_ptr<ProblemInstance> ThreadEvaluator::acquire() {
  {
    std::lock_guard lock(pool_mutex_);
    if (!pool_.empty()) {
      auto instance = std::move(pool_.back());
      pool_.pop_back();
      return instance;
    }
  }
  return problem_->make_instance();
}

void ThreadEvaluator::release(std::unique_ptr<ProblemInstance> instance) {
  std::lock_guard lock(pool_mutex_);
  pool_.push_back(std::move(instance));
}

void ThreadEvaluator::evaluate(Batch& batch) {
  if (batch.count == 0) return;
  // About eight chunks per thread balance uneven evaluations while keeping per-chunk overhead
  // (an instance from the pool, one plugin call) small next to cheap evaluations.
  const std::size_t chunk = std::max(kChunk, batch.count / (8 * threads_));
  const std::size_t chunks = (batch.count + chunk - 1) / chunk;
  std::exception_ptr failure;
  std::mutex failure_mutex;
  const auto run = [&] {
    tbb::parallel_for(tbb::blocked_range<std::size_t>(0, chunks, 1),
                      [&](const tbb::blocked_range<std::size_t>& range) {
                        auto instance = acquire();
                        try {
                          for (std::size_t c = range.begin(); c != range.end(); ++c) {
                            const std::size_t first = c * chunk;
                            const std::size_t count = std::min(chunk, batch.count - first);
                            instance->evaluate(batch, first, count);
                          }
                        } catch (...) {
                          std::lock_guard lock(failure_mutex);
                          if (!failure) failure = std::current_exception();
                        }
                        release(std::move(instance));
                      });
  };
  if (arena_)
    arena_->arena.execute(run);
  else
    run();
  if (failure) std::rethrow_exception(failure);
}

void ThreadEvaluator::evaluate_range(Batch& batch, std::size_t first, std::size_t count) {
  if (count == 0) return;
  auto instance = acquire();
  try {
    instance->evaluate(batch, first, count);
  } catch (...) {
    release(std::move(instance));
    throw;
  }
  release(std::move(instance));
}

}  // namespace tessera
