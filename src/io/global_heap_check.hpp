// A check of an HDF5 file's global heap collections (where variable-length strings live) before
// libhdf5 reads them. The 1.10 format checksums its object headers but not the global heap, and
// libhdf5 1.10 copies a heap object by the size stored in the collection without checking it
// against the collection: one damaged size makes it read far past its buffer. Every collection
// ("GCOL", version 1, HDF5 file format specification, "Global Heap") is walked as libhdf5 walks
// it, and an object that does not fit inside its collection, or a collection that does not fit
// inside the file, is a fault.
#pragma once

#include <cstddef>
#include <optional>
#include <string>

namespace tessera {

// The fault found in the global heap collections of the file at `path` ("global heap at byte
// N: ..."), or std::nullopt. Unreadable files give std::nullopt: opening them reports that.
// The file is searched `block_bytes` at a time (any size from 1 finds the same).
std::optional<std::string> global_heap_fault(const std::string& path,
                                             std::size_t block_bytes = std::size_t{8} << 20);

}  // namespace tessera
