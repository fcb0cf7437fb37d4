#include "io/chunk_codec.hpp"

#include <zlib.h>

#include <stdexcept>

namespace tessera {
namespace {

// HDF5's shuffle filter: byte b of element i goes to position b * count + i. Trailing bytes that
// do not fill an element stay where they are.
void shuffle(const unsigned char* in, unsigned char* out, std::size_t bytes, std::size_t size) {
  const std::size_t count = bytes / size;
  for (std::size_t i = 0; i < count; ++i)
    for (std::size_t b = 0; b < size; ++b) out[b * count + i] = in[i * size + b];
  for (std::size_t k = count * size; k < bytes; ++k) out[k] = in[k];
}

void unshuffle(const unsigned char* in, unsigned char* out, std::size_t bytes, std::size_t size) {
  const std::size_t count = bytes / size;
  for (std::size_t b = 0; b < size; ++b)
    for (std::size_t i = 0; i < count; ++i) out[i * size + b] = in[b * count + i];
  for (std::size_t k = count * size; k < bytes; ++k) out[k] = in[k];
}

// The shuffled bytes of the chunk this thread is working on. Grown, never shrunk or zero-filled
// again: every byte is overwritten before it is read.
unsigned char* shuffle_buffer(std::size_t bytes) {
  thread_local std::vector<unsigned char> buffer;
  if (buffer.size() < bytes) buffer.resize(bytes);
  return buffer.data();
}

}  // namespace

std::size_t max_deflated_bytes(std::size_t bytes) {
  return compressBound(static_cast<uLong>(bytes));
}

void encode_chunk(const unsigned char* data, std::size_t bytes, std::size_t element_size, int level,
                  std::vector<unsigned char>& out) {
  unsigned char* shuffled = shuffle_buffer(bytes);
  shuffle(data, shuffled, bytes, element_size);
  uLongf out_bytes = compressBound(static_cast<uLong>(bytes));
  out.resize(out_bytes);
  if (compress2(out.data(), &out_bytes, shuffled, static_cast<uLong>(bytes), level) != Z_OK)
    throw std::runtime_error("zlib compress2 failed");
  out.resize(out_bytes);
}

bool decode_chunk(const unsigned char* stored, std::size_t stored_bytes, unsigned char* out,
                  std::size_t bytes, std::size_t element_size) {
  unsigned char* shuffled = shuffle_buffer(bytes);
  uLongf out_bytes = static_cast<uLongf>(bytes);
  // uncompress never writes past out_bytes, whatever the stored bytes claim.
  if (uncompress(shuffled, &out_bytes, stored, static_cast<uLong>(stored_bytes)) != Z_OK ||
      out_bytes != bytes)
    return false;
  unshuffle(shuffled, out, bytes, element_size);
  return true;
}

}  // namespace tessera
