// Target descriptors for `tessera query --targets FILE.csv`: one requirement per line.
//
// Lines that are blank or start with '#' are skipped. The first remaining line may be a header
// naming the descriptors (in any order; every descriptor exactly once): the columns are then
// matched by name. Without a header the columns are the descriptors in archive order. Fields are
// separated by commas; surrounding spaces and double quotes around a header name are ignored.
#pragma once

#include <string>
#include <vector>

namespace tessera {

// Returns the targets in file order, each in archive descriptor order. Throws tessera::InputError
// "PATH: fault" (or "PATH: line N: fault") for an unreadable file, a header that does not name the
// descriptors, a line with the wrong number of fields, a field that is not a finite number, or a
// file without targets.
std::vector<std::vector<double>> read_targets_csv(const std::string& path,
                                                  const std::vector<std::string>& names);

}  // namespace tessera
