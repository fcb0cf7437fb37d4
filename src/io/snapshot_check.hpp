// Consistency of an ArchiveSnapshot against the archive format (docs/archive-format.md): shapes that
// must agree, values that must be finite, cells in range and never shared, and the invariants
// between parts: descriptors in their cells, genomes within bounds, distinct CVT centroids,
// history and resume counters that agree, a stored run file that describes /space. The writer
// checks before it touches the disk; the reader checks what it read. Sizes are checked again,
// before anything is allocated, by the reader itself (archive_file.cpp).
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>

#include "core/archive/snapshot.hpp"

namespace tessera {

// Sanity limits on sizes read from a file, so that a damaged or hostile file cannot make the
// reader allocate without bound. Each is far above anything a real run produces.
inline constexpr std::uint64_t kMaxGenomeSize = std::uint64_t{1} << 24;
inline constexpr std::uint64_t kMaxDescriptorSize = 4096;
inline constexpr std::uint64_t kMaxHistoryRows = std::uint64_t{1} << 28;
inline constexpr std::uint64_t kMaxArrayElements = std::uint64_t{1} << 32;  // any one dataset
inline constexpr std::uint64_t kMaxResumeEntries = 100000;  // counters or arrays in /resume
inline constexpr std::uint64_t kMaxExtraSize = 65536;       // extra figures per elite

// Returns the first fault found, phrased with the format's names ("/elites/fitness[3] is NaN"),
// or nothing when the snapshot is a valid archive. Extra figures may be NaN or infinite (not
// recorded, or not defined for that elite); every other stored value must be finite.
std::optional<std::string> snapshot_fault(const ArchiveSnapshot& snapshot);

// The same for the /space part alone (kind, bounds, names, resolution or centroids).
std::optional<std::string> space_fault(const ArchiveSnapshot& snapshot);

// True when `name` can be an HDF5 link or attribute name of /resume (non-empty, no '/', no
// newline, not ".").
bool valid_resume_name(const std::string& name);

}  // namespace tessera
