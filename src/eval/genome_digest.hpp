// The genome digest a worker may echo in its answer ("digest": 16 lowercase hex digits), so that
// an answer sent under the wrong request id is caught: FNV-1a 64 (Fowler, Noll, Vo) over the
// genome's values as little-endian IEEE-754 binary64 bytes, in order. Python:
//   h = 0xcbf29ce484222325
//   for b in struct.pack("<%dd" % len(genome), *genome): h = ((h ^ b) * 0x100000001b3) % 2**64
//   digest = "%016x" % h
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>

namespace tessera {

std::uint64_t fnv1a64(const unsigned char* bytes, std::size_t size);

std::string genome_digest(const double* genome, std::size_t size);

}  // namespace tessera
