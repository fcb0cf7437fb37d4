#include "io/global_heap_check.hpp"

#include <cstdint>
#include <cstring>
#include <fstream>
#include <iterator>
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

// The fault of the collection at `at`, or "".
std::string collection_fault(const std::vector<unsigned char>& file, std::size_t at) {
  const unsigned char* head = file.data() + at;
  const std::uint64_t size = little_endian(head + 8, 8);
  if (size < kCollectionHeader || size > file.size() - at)
    return "a collection of " + std::to_string(size) + " bytes in a file of " +
           std::to_string(file.size());
  const std::uint64_t end = at + size;
  std::uint64_t p = at + kCollectionHeader;
  // As libhdf5 walks it: a tail shorter than an object header is free space.
  while (p + kObjectHeader <= end) {
    const std::uint64_t index = little_endian(file.data() + p, 2);
    const std::uint64_t object = little_endian(file.data() + p + 8, 8);
    const std::uint64_t left = end - p;
    if (index == 0) {  // the free space: its size counts its own header
      if (object < kObjectHeader || object > left)
        return "free space of " + std::to_string(object) + " bytes where " +
               std::to_string(left) + " are left";
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

std::optional<std::string> global_heap_fault(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return std::nullopt;
  const std::vector<unsigned char> file((std::istreambuf_iterator<char>(in)),
                                        std::istreambuf_iterator<char>());
  const std::string_view bytes(reinterpret_cast<const char*>(file.data()), file.size());
  for (std::size_t at = bytes.find("GCOL"); at != std::string_view::npos;
       at = bytes.find("GCOL", at + 1)) {
    if (file.size() - at < kCollectionHeader) break;
    // Only what libhdf5 would take for a collection: version 1, reserved bytes zero. The same
    // four letters inside compressed data are not followed by these.
    if (file[at + 4] != 1 || file[at + 5] != 0 || file[at + 6] != 0 || file[at + 7] != 0) continue;
    const std::string fault = collection_fault(file, at);
    if (!fault.empty()) return "global heap at byte " + std::to_string(at) + ": " + fault;
  }
  return std::nullopt;
}

}  // namespace tessera
