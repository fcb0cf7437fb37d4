// HDF5 archive files. The layout is normative and written down in docs/archive-format.md: format
// 2 is written; format 1 (no extras, population searches' novelty archive as unstructured
// /elites, attribute qd_offset) is still read.
#pragma once

#include <string>

#include "core/archive/snapshot.hpp"

namespace tessera {

inline constexpr int kArchiveFormatVersion = 2;
inline constexpr int kOldestArchiveFormatVersion = 1;

struct ArchiveWriteOptions {
  // Numeric datasets through shuffle + deflate (smaller files of smooth data), or stored as they
  // are (the default: random doubles shrink little and deflate dominates the writing time).
  // Either way every numeric chunk carries a Fletcher-32 checksum; the reader takes both.
  bool compress = false;
};

// Writes the snapshot whole to a temporary file beside `path` (".NAME.tmp-HOST-PID"), flushes it
// to disk and renames it over `path`, so that a reader or a crash never sees half a file; stale
// temporary files of killed writers on this machine are removed. Elites are written in the
// snapshot's order. Throws std::invalid_argument when the snapshot is not a valid
// archive (nothing is touched), tessera::InputError "PATH: cannot write archive: ..."
// when the file system refuses; in both cases any previous file at `path` is left intact.
void write_archive_file(const std::string& path, const ArchiveSnapshot& snapshot,
                        const ArchiveWriteOptions& options = {});

// Reads and validates an archive. Throws tessera::InputError with one line "PATH: fault" for a
// missing file, a file that is not HDF5 or not a tessera archive, a newer format version, a
// truncated or damaged file, shapes that disagree and non-finite stored values. Every size read
// from the file is checked before anything is allocated from it.
// The snapshot's format_version is the file's.
ArchiveSnapshot read_archive_file(const std::string& path);

}  // namespace tessera
