// The statistics and the report of a comparison, shared by `tessera compare` and `tessera study`:
// computes core/stats/comparison.hpp over a table of observations, prints it as text, JSON or
// long-format CSV, and writes the comparison report when a folder is given.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "core/stats/comparison.hpp"
#include "core/stats/observations.hpp"

namespace tessera::cli {

struct CompareOutputOptions {
  std::string format = "text";        // "text" | "json" | "csv"
  std::string report_dir;             // empty: no report
  std::string reference;              // reference group of the curves; empty: the first group
  std::vector<std::string> groups;    // group order; empty: order of first appearance
  std::vector<std::string> measures;  // empty: every measure of the table
  std::string title = "Comparison";   // heading of the report page
};

// Throws tessera::InputError (one line) when an option names a group or measure the table lacks
// or the report cannot be written. Returns the statistics it printed.
ComparisonResult write_comparison(std::ostream& out, const ObservationTable& table,
                                  const CompareOutputOptions& options);

}  // namespace tessera::cli
