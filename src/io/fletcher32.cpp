#include "io/fletcher32.hpp"

#include <algorithm>

namespace tessera {

std::uint32_t fletcher32(const unsigned char* data, std::size_t bytes) {
  std::uint32_t sum1 = 0, sum2 = 0;
  // 360 words keep both sums within 32 bits before they are folded.
  for (std::size_t words = bytes / 2; words > 0;) {
    const std::size_t block = std::min<std::size_t>(words, 360);
    words -= block;
    for (std::size_t i = 0; i < block; ++i, data += 2) {
      sum1 += (static_cast<std::uint32_t>(data[0]) << 8) | data[1];
      sum2 += sum1;
    }
    sum1 = (sum1 & 0xffff) + (sum1 >> 16);
    sum2 = (sum2 & 0xffff) + (sum2 >> 16);
  }
  if (bytes % 2 != 0) {
    sum1 += static_cast<std::uint32_t>(data[0]) << 8;
    sum2 += sum1;
    sum1 = (sum1 & 0xffff) + (sum1 >> 16);
    sum2 = (sum2 & 0xffff) + (sum2 >> 16);
  }
  sum1 = (sum1 & 0xffff) + (sum1 >> 16);
  sum2 = (sum2 & 0xffff) + (sum2 >> 16);
  return (sum2 << 16) | sum1;
}

bool fletcher32_matches(const unsigned char* chunk, std::size_t bytes) {
  if (bytes < 4) return false;
  const unsigned char* tail = chunk + bytes - 4;
  const std::uint32_t stored =
      static_cast<std::uint32_t>(tail[0]) | static_cast<std::uint32_t>(tail[1]) << 8 |
      static_cast<std::uint32_t>(tail[2]) << 16 | static_cast<std::uint32_t>(tail[3]) << 24;
  return stored == fletcher32(chunk, bytes - 4);
}

}  // namespace tessera
