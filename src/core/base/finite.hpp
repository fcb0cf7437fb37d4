// Whether a run of doubles is all finite, without a branch per value so that the loop
// vectorises (hot in the insertion of every candidate and in checking an archive before it is
// written). A double is infinite or NaN exactly when its 11 exponent bits are all ones; the test
// is kept in integers because GCC does not vectorise a reduction over bool.
#pragma once

#include <bit>
#include <cstdint>
#include <span>

namespace tessera {

inline bool all_finite(std::span<const double> values) {
  std::uint64_t non_finite = 0;
  for (const double v : values) {
    const auto bits = std::bit_cast<std::uint64_t>(v);
    non_finite |= (((bits >> 52) & 0x7ff) + 1) >> 11;
  }
  return non_finite == 0;
}

}  // namespace tessera
