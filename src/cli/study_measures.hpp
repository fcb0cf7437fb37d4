// The measures of a study, taken from the runs' archives once the runs are finished: final
// history figures, success, probes and re-adaptation, one observation per run and measure, and
// the history curves. A run that failed or is not finished keeps its rows with no value.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "cli/study_plan.hpp"
#include "core/stats/observations.hpp"
#include "io/study_file.hpp"

namespace tessera::cli {

// Opens the problem of every probe and checks the figures and places it names (before any run
// starts, so a misnamed figure costs nothing). Throws InputError naming the study file.
void check_probes(const StudySpec& spec);

// `notes` gets one line per measure that could not be taken from a finished run.
ObservationTable collect_measures(const StudySpec& spec, const StudyPlan& plan, std::size_t threads,
                                  std::vector<std::string>& notes);

}  // namespace tessera::cli
