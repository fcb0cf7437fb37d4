// measures.csv: the long table of per-run measures (core/stats/observations.hpp) as CSV, one row
// per run and measure, written by `tessera study` and read by `tessera compare --measures`.
//
//   group,run,measure,value,censored
//   novelty,seed-1,coverage,0.4375,0
//   novelty,seed-2,coverage,,0          <- missing (the run failed or could not be measured)
//   novelty,seed-1,readapt.goal-1,5000,1  <- censored: not reached within 5000 evaluations
//
// Fields follow RFC 4180 (a field holding a comma or a quote is quoted, quotes doubled); values
// are written as the shortest text that reads back as the same double.
#pragma once

#include <string>
#include <vector>

#include "core/stats/observations.hpp"

namespace tessera {

// Writes the whole file under a temporary name beside `path` and renames it over `path`.
// tessera::InputError "PATH: cannot write ..." when the file system refuses.
void write_measures_csv(const std::string& path, const std::vector<Observation>& rows);

// Throws tessera::InputError "PATH: fault" or "PATH: line N: fault" for an unreadable file, a
// header that is not the one above, a row with another number of fields, a value that is not a
// number, a censored flag other than 0 / 1, or an empty group, run or measure name.
std::vector<Observation> read_measures_csv(const std::string& path);

}  // namespace tessera
