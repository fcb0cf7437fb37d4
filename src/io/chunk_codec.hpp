// One HDF5 chunk through the shuffle and deflate filters, byte-compatible with HDF5's own
// filters (shuffle: byte planes of the elements; deflate: a zlib stream), so that the chunks of a
// large dataset can be compressed and expanded on many threads while the HDF5 library, which is
// single-threaded, only moves the finished bytes. The shuffled bytes pass through a buffer kept
// per thread, so a large dataset allocates it once per thread, not once per chunk.
#pragma once

#include <cstddef>
#include <vector>

namespace tessera {

// Shuffles `bytes` bytes of elements of `element_size` bytes, then deflates them at `level` into
// `out` (resized to the stored length; its capacity is reused from chunk to chunk).
void encode_chunk(const unsigned char* data, std::size_t bytes, std::size_t element_size, int level,
                  std::vector<unsigned char>& out);

// The most bytes a deflated chunk of `bytes` bytes can take (zlib's compressBound).
std::size_t max_deflated_bytes(std::size_t bytes);

// Inflates `stored` into exactly `bytes` bytes and unshuffles them into `out`. Returns false when
// the stored bytes are not a zlib stream of exactly that length (a damaged file).
bool decode_chunk(const unsigned char* stored, std::size_t stored_bytes, unsigned char* out,
                  std::size_t bytes, std::size_t element_size);

}  // namespace tessera
