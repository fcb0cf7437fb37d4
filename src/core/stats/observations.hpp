// The long ("tidy") table of a comparison: one value of one measure for one run. Studies write
// it to measures.csv; `compare` builds it from existing archives; the statistics read it.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

namespace tessera {

// One figure of one run. A run that failed or could not be measured keeps its row with no
// value, so it is reported as missing and never counted as zero.
struct Observation {
  std::string group;            // treatment label, e.g. "novelty"
  std::string run;              // run identifier within its group, e.g. "seed-3"
  std::string measure;          // e.g. "coverage", "qd_score", "probe.maze.area", "success"
  std::optional<double> value;  // empty = missing
  bool censored = false;        // value is a budget at which the event had not happened yet
};

// One point of a run's curve over evaluations (from /history), for median curves.
struct CurvePoint {
  std::string group;
  std::string run;
  std::string measure;  // "coverage", "qd_score", "max_fitness"
  std::uint64_t evaluations = 0;
  double value = 0.0;
};

struct ObservationTable {
  std::vector<Observation> finals;
  std::vector<CurvePoint> curves;
};

}  // namespace tessera
