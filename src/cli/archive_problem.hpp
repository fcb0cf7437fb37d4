// The problem an archive was made with, opened again from its stored run file (for `trace` and
// the report's scene drawings).
#pragma once

#include <memory>
#include <string>

#include "core/archive/snapshot.hpp"
#include "problems/problem.hpp"

namespace tessera::cli {

// Throws InputError "ARCHIVE: ..." when the stored run file cannot be read, the problem cannot be
// opened, or its genome size differs from the archive's.
std::shared_ptr<const Problem> open_archive_problem(const ArchiveSnapshot& snapshot,
                                                    const std::string& archive);

}  // namespace tessera::cli
