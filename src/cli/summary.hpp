// The summary printed at the end of `illuminate` and `resume`.
#pragma once

#include <cstdint>
#include <ostream>
#include <string>

#include "cli/run_setup.hpp"

namespace tessera::cli {

// `start_evaluations`: the evaluation count when this process started (non-zero after resume),
// so the rate counts only the evaluations run here, in `seconds`.
void print_summary(std::ostream& out, const PreparedRun& run, const std::string& archive_path,
                   std::uint64_t start_evaluations, double seconds);

}  // namespace tessera::cli
