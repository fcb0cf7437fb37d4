// Observations of groups of archives for a comparison: each archive is one run; its final history
// row gives the measures "coverage", "qd_score" and "max_fitness", and its whole history the
// curves of the same names. An archive that cannot be read stays in the table as a run without
// values (missing, never zero) and is reported on the warning stream.
#pragma once

#include <ostream>
#include <string>
#include <utility>
#include <vector>

#include "core/stats/observations.hpp"

namespace tessera::cli {

struct ArchiveGroup {
  std::string label;
  std::vector<std::string> archives;  // one run each
};

// Parses LABEL=GLOB and expands the glob (sorted). InputError when the text has no '=' or an
// empty label, or when the pattern matches no file.
ArchiveGroup parse_archive_group(const std::string& text);

// Appends the archives' curves to `table`, and their finals unless `with_finals` is false (a
// study that measured the finals itself adds only the curves). The run of an archive is its path.
void add_archive_observations(const std::vector<ArchiveGroup>& groups, ObservationTable& table,
                              std::ostream& warnings, bool with_finals = true);

}  // namespace tessera::cli
