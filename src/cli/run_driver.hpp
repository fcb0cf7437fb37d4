// Drives a prepared search to its budget: progress line, periodic checkpoints, and a clean stop
// on SIGINT/SIGTERM (the batch in flight finishes, a checkpoint is written, exit 130/143).
#pragma once

#include <string>

#include "cli/run_setup.hpp"

namespace tessera::cli {

struct DriveOptions {
  std::string archive_path;
  bool quiet = false;
};

// Returns the process exit code: 0 when the budget was reached, 130/143 when interrupted.
int drive_run(PreparedRun& run, const DriveOptions& options);

// Writes the run's archive (atomically).
void write_checkpoint(const PreparedRun& run, const std::string& path);

}  // namespace tessera::cli
