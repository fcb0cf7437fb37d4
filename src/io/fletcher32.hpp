// HDF5's Fletcher-32 checksum (the H5Z_FILTER_FLETCHER32 filter): 16-bit big-endian words summed
// in blocks of 360, an odd last byte as the high half of a word; stored little-endian after the
// chunk. Tessera writes and reads compressed chunks itself, so it adds and verifies the checksum
// exactly as the filter would.
#pragma once

#include <cstddef>
#include <cstdint>

namespace tessera {

std::uint32_t fletcher32(const unsigned char* data, std::size_t bytes);

// Appends nothing; true when the last 4 bytes of `chunk` (of `bytes` in all) are the checksum of
// the bytes before them.
bool fletcher32_matches(const unsigned char* chunk, std::size_t bytes);

}  // namespace tessera
