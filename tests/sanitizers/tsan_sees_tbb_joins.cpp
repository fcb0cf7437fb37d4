// Checks that ThreadSanitizer sees TBB's joins (scripts/run-tsan-tests builds it against the
// instrumented oneTBB before the suite runs): the sum after the first loop reads what two threads
// wrote and must not be reported; the second loop adds into one variable from two threads, a real
// race that must be. A TSan build that reports the first or misses the second would make the
// suite's silence meaningless.
#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>
#include <tbb/partitioner.h>

#include <atomic>
#include <chrono>
#include <cstdio>
#include <thread>
#include <vector>

namespace {

// Runs body(0) and body(1) on two threads at once (a loaded machine could otherwise run both on
// one thread, where nothing can race): each waits until both have started. The waiting uses
// relaxed atomics, which order nothing, so it adds no happens-before edge of its own.
template <class Body>
void on_two_threads(Body body) {
  std::atomic<int> started{0};
  tbb::parallel_for(
      tbb::blocked_range<int>(0, 2, 1),
      [&](const tbb::blocked_range<int>& range) {
        for (int k = range.begin(); k != range.end(); ++k) {
          started.fetch_add(1, std::memory_order_relaxed);
          const auto give_up = std::chrono::steady_clock::now() + std::chrono::seconds(30);
          while (started.load(std::memory_order_relaxed) < 2 &&
                 std::chrono::steady_clock::now() < give_up)
            std::this_thread::yield();
          body(k);
        }
      },
      tbb::simple_partitioner());
}

}  // namespace

int main() {
  std::vector<long> values(1000, 1);
  on_two_threads([&](int half) {
    for (std::size_t i = half * 500; i < (half + 1) * 500u; ++i) values[i] *= 2;
  });
  long after_join = 0;
  for (long v : values) after_join += v;  // TSAN-PROBE: ordered by the join
  long racy = 0;
  on_two_threads([&](int half) {
    racy += values[half];  // TSAN-PROBE: racy
  });
  std::printf("%ld %ld\n", after_join, racy);
  return 0;
}
