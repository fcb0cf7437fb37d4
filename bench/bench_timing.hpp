// Timing helpers shared by the benchmark programs: wall seconds and the median of repeats.
#pragma once

#include <algorithm>
#include <chrono>
#include <vector>

namespace tessera::bench {

inline double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Median of repeated measurements (the upper middle for an even count).
inline double median(std::vector<double> values) {
  std::sort(values.begin(), values.end());
  return values[values.size() / 2];
}

}  // namespace tessera::bench
