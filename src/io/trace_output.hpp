// `tessera trace` output: one elite's trace (a Figure) as CSV or JSON, with the elite it belongs
// to and the cautions that go with it. The layout is described in the README ("Traces").
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "problems/figure.hpp"

namespace tessera {

struct TracedElite {
  std::string archive;
  std::string problem;
  std::int64_t cell = 0;
  double fitness = 0.0;
  std::vector<std::string> descriptor_names;
  std::vector<double> descriptor;
  std::vector<double> genome;
  std::vector<std::string> cautions;  // printed with the file and written into it
};

// CSV: '#' comment lines (the elite, the notes, the cautions), then one table with a column
// `item` and the union of the items' columns in order of first use; one row per item row, empty
// cells where an item has no such column.
std::string trace_csv(const TracedElite& elite, const Figure& trace);

// JSON: {"format": "tessera-trace", "version": 1, the elite's fields, "cautions", "notes",
// "items": [{"name", "kind", "style", "closed", "columns", "rows"}]}.
std::string trace_json(const TracedElite& elite, const Figure& trace);

}  // namespace tessera
