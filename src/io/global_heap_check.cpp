#include "io/global_heap_check.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cstdint>
#include <string_view>
#include <vector>

namespace tessera {
namespace {

// HDF5 file format specification, "Global Heap": signature "GCOL", version 1, 3 reserved bytes,
// the collection size (length, 8 bytes in the files tessera reads: sizeof_size = 8), then objects
// of a 2-byte index, 2-byte reference count, 4 reserved bytes, an 8-byte size and the data
// padded to a multiple of 8. Index 0 is the free space.
constexpr std::size_t kCollectionHeader = 16;
constexpr std::size_t kObjectHeader = 16;

std::uint64_t little_endian(const unsigned char* p, int bytes) {
  std::uint64_t value = 0;
  for (int i = bytes - 1; i >= 0; --i) value = (value << 8) | p[i];
  return value;
}

// Reads `count` bytes at `offset`; false when the file ends first or the read fails.
bool read_at(int fd, std::uint64_t offset, unsigned char* out, std::size_t count) {
  while (count > 0) {
    const ssize_t got = ::pread(fd, out, count, static_cast<off_t>(offset));
    if (got <= 0) return false;
    out += got;
    offset += static_cast<std::uint64_t>(got);
    count -= static_cast<std::size_t>(got);
  }
  return true;
}

// The fault of a collection of `file_size - at` bytes or fewer whose header is `head`, read
// from `fd`; or "".
std::string collection_fault(int fd, std::uint64_t at, const unsigned char* head,
                             std::uint64_t file_size) {
  const std::uint64_t size = little_endian(head + 8, 8);
  if (size < kCollectionHeader || size > file_size - at)
    return "a collection of " + std::to_string(size) + " bytes in a file of " +
           std::to_string(file_size);
  std::vector<unsigned char> collection(size);
  if (!read_at(fd, at, collection.data(), collection.size())) return "";  // reported on open
  std::uint64_t p = kCollectionHeader;
  // As libhdf5 walks it: a tail shorter than an object header is free space.
  while (p + kObjectHeader <= size) {
    const std::uint64_t index = little_endian(collection.data() + p, 2);
    const std::uint64_t object = little_endian(collection.data() + p + 8, 8);
    const std::uint64_t left = size - p;
    if (index == 0) {  // the free space: its size counts its own header
      if (object < kObjectHeader || object > left)
        return "free space of " + std::to_string(object) + " bytes where " + std::to_string(left) +
               " are left";
      p += object;
      continue;
    }
    if (object > left - kObjectHeader || (object + 7) / 8 * 8 > left - kObjectHeader)
      return "object " + std::to_string(index) + " of " + std::to_string(object) +
             " bytes past the end of its collection";
    p += kObjectHeader + (object + 7) / 8 * 8;
  }
  return "";
}

}  // namespace

std::optional<std::string> global_heap_fault(const std::string& path, std::size_t block_bytes) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return std::nullopt;
  struct Closer {
    int fd;
    ~Closer() { ::close(fd); }
  } closer{fd};
  struct stat info {};
  if (::fstat(fd, &info) != 0 || !S_ISREG(info.st_mode)) return std::nullopt;
  const auto file_size = static_cast<std::uint64_t>(info.st_size);
  // The file is searched block by block (a large archive is mostly raw data, read once here at
  // the speed of a copy); each block carries the first 3 bytes of the next, so a signature that
  // straddles two blocks is found in the first.
  const std::size_t step = std::max<std::size_t>(block_bytes, 1);
  std::vector<unsigned char> block(step + 3);
  for (std::uint64_t offset = 0; offset < file_size; offset += step) {
    const auto length =
        static_cast<std::size_t>(std::min<std::uint64_t>(block.size(), file_size - offset));
    if (!read_at(fd, offset, block.data(), length)) return std::nullopt;
    const std::string_view bytes(reinterpret_cast<const char*>(block.data()), length);
    for (std::size_t i = bytes.find("GCOL"); i != std::string_view::npos && i < step;
         i = bytes.find("GCOL", i + 1)) {
      const std::uint64_t at = offset + i;
      if (file_size - at < kCollectionHeader) return std::nullopt;
      unsigned char head[kCollectionHeader];
      if (!read_at(fd, at, head, sizeof head)) return std::nullopt;
      // Only what libhdf5 would take for a collection: version 1, reserved bytes zero. The
      // same four letters inside compressed data are not followed by these.
      if (head[4] != 1 || head[5] != 0 || head[6] != 0 || head[7] != 0) continue;
      const std::string fault = collection_fault(fd, at, head, file_size);
      if (!fault.empty()) return "global heap at byte " + std::to_string(at) + ": " + fault;
    }
  }
  return std::nullopt;
}

}  // namespace tessera
