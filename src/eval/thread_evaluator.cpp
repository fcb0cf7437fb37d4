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
  slot_count_ = std::max(caller, threads_);
  slots_ = std::make_unique<Slot[]>(slot_count_);
}

ThreadEvaluator::~ThreadEvaluator() = default;

// An instance held for one call: the calling thread's slot, or one from the pool.
class ThreadEvaluator::Lease {
 public:
  explicit Lease(ThreadEvaluator& owner) : owner_(owner) {
    const int index = tbb::this_task_arena::current_thread_index();
    if (index >= 0 && static_cast<std::size_t>(index) < owner_.slot_count_) {
      Slot& slot = owner_.slots_[static_cast<std::size_t>(index)];
      if (!slot.busy.exchange(true, std::memory_order_acquire)) {
        if (!slot.instance) {
          try {
            slot.instance = owner_.problem_->make_instance();
          } catch (...) {
            slot.busy.store(false, std::memory_order_release);
            throw;
          }
        }
        slot_ = &slot;
        return;
      }
    }
    {
      std::lock_guard lock(owner_.pool_mutex_);
      if (!owner_.pool_.empty()) {
        pooled_ = std::move(owner_.pool_.back());
        owner_.pool_.pop_back();
      }
    }
    if (!pooled_) pooled_ = owner_.problem_->make_instance();
  }
  ~Lease() {
    if (slot_) {
      slot_->busy.store(false, std::memory_order_release);
      return;
    }
    std::lock_guard lock(owner_.pool_mutex_);
    owner_.pool_.push_back(std::move(pooled_));
  }
  Lease(const Lease&) = delete;
  Lease& operator=(const Lease&) = delete;
  ProblemInstance& operator*() const { return slot_ ? *slot_->instance : *pooled_; }

 private:
  ThreadEvaluator& owner_;
  Slot* slot_ = nullptr;
  std::unique_ptr<ProblemInstance> pooled_;
};

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
                        try {
                          Lease instance(*this);
                          for (std::size_t c = range.begin(); c != range.end(); ++c) {
                            const std::size_t first = c * chunk;
                            const std::size_t count = std::min(chunk, batch.count - first);
                            (*instance).evaluate(batch, first, count);
                          }
                        } catch (...) {
                          std::lock_guard lock(failure_mutex);
                          if (!failure) failure = std::current_exception();
                        }
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
  Lease instance(*this);
  (*instance).evaluate(batch, first, count);
}

}  // namespace tessera
