// Runs the jobs of a study side by side, each a child `tessera illuminate` (or `resume`, for a
// run with a checkpoint and no done marker), so every run equals the same run started alone and
// a run that crashes takes only itself down. Ctrl-C (or SIGTERM) is passed on to the runs, which
// checkpoint and stop; the same command later resumes them.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "cli/study_plan.hpp"

namespace tessera::cli {

struct RunnerOptions {
  std::size_t jobs = 1;     // runs at a time
  std::size_t threads = 1;  // threads per run
  bool quiet = false;
  // Unselected needs may be run by another process (another MPI rank): wait for their done
  // marker instead of failing, until they leave a failed marker.
  bool wait_for_others = false;
};

struct RunnerResult {
  std::size_t finished = 0;           // done by this call
  std::size_t skipped = 0;            // done before
  std::vector<std::string> failures;  // one line per failed run
  int stop_signal = 0;                // SIGINT/SIGTERM received, else 0
};

// Runs `selected` (indices into plan.jobs, in order). A job waits for the jobs it needs; when one
// of those fails, or is not selected and not done, it fails too.
RunnerResult run_jobs(const StudyPlan& plan, const std::vector<std::size_t>& selected,
                      const RunnerOptions& options);

}  // namespace tessera::cli
