// The summary printed at the end of `illuminate` and `resume`.
#pragma once

#include <ostream>
#include <string>

#include "cli/run_setup.hpp"

namespace tessera::cli {

void print_summary(std::ostream& out, const PreparedRun& run, const std::string& archive_path,
                   double seconds);

}  // namespace tessera::cli
