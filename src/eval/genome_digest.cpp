#include "eval/genome_digest.hpp"

#include <bit>
#include <cstdio>
#include <cstring>

namespace tessera {

std::uint64_t fnv1a64(const unsigned char* bytes, std::size_t size) {
  std::uint64_t h = 0xcbf29ce484222325ULL;
  for (std::size_t i = 0; i < size; ++i) {
    h ^= bytes[i];
    h *= 0x100000001b3ULL;
  }
  return h;
}

std::string genome_digest(const double* genome, std::size_t size) {
  std::uint64_t h = 0xcbf29ce484222325ULL;
  for (std::size_t i = 0; i < size; ++i) {
    const auto bits = std::bit_cast<std::uint64_t>(genome[i]);
    for (int shift = 0; shift < 64; shift += 8) {  // little-endian whatever the machine
      h ^= (bits >> shift) & 0xff;
      h *= 0x100000001b3ULL;
    }
  }
  char text[17];
  std::snprintf(text, sizeof text, "%016llx", static_cast<unsigned long long>(h));
  return text;
}

}  // namespace tessera
