#include "io/fletcher32.hpp"

#include <algorithm>

namespace tessera {

std::uint32_t fletcher32(const unsigned char* data, std::size_t bytes) {
  std::uint32_t sum1 = 0, sum2 = 0;
  // 360 words keep both sums within 32 bits before they are folded (HDF5 folds at the same
  // points, so the result is the same bit for bit). Within a block the running sums are written
  // in closed form: sum1 gains the words, sum2 gains block * sum1 plus each word weighted by the
  // number of words from it to the block's end. The same integers, without the word-to-word
  // dependency, so the compiler vectorises the block (checksumming was a tenth of writing an
  // uncompressed archive). Both forms are sums and products in 32-bit unsigned arithmetic, so
  // they agree even where the sums wrap.
  for (std::size_t words = bytes / 2; words > 0;) {
    const std::uint32_t block = static_cast<std::uint32_t>(std::min<std::size_t>(words, 360));
    words -= block;
    std::uint32_t plain = 0, weighted = 0;
    for (std::uint32_t i = 0; i < block; ++i) {
      const std::uint32_t word = (static_cast<std::uint32_t>(data[2 * i]) << 8) | data[2 * i + 1];
      plain += word;
      weighted += (block - i) * word;
    }
    data += 2 * static_cast<std::size_t>(block);
    sum2 += block * sum1 + weighted;
    sum1 += plain;
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
