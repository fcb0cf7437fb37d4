// Study files (TOML): the treatments to compare (a label, a run file and run-file overrides),
// the replicates (a count or a list of seeds) and the measures to take from every run. Checked
// like run files: an unknown key, a missing run file, a duplicate label or zero replicates is
// refused in one line naming the file and the key.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace tessera {

struct StudyTreatment {
  std::string label;                   // also the folder name of its runs
  std::string run_file;                // absolute path
  std::vector<std::string> overrides;  // SECTION.KEY=VALUE, applied in order
  std::string matched;                 // matched random control of this treatment; empty = none
};

enum class MeasureKind { final_figures, success, probe, readapt };

struct StudyMeasure {
  MeasureKind kind = MeasureKind::final_figures;
  std::string name;                    // prefix of the measure names (probe, readapt)
  std::vector<std::string> figures;    // final: history figures; probe: extra figures (median)
  std::vector<std::string> places;     // probe: places whose <place>_time says "reached"
  double threshold = 0.0;              // success, readapt: max fitness that counts as reached
  std::string run_file;                // probe: the problem to re-evaluate in (absolute)
  std::vector<std::string> overrides;  // probe: overrides of that run file
  std::size_t best = 0;                // probe: the N best elites; 0 = all
  std::vector<std::pair<std::string, std::string>> place_runs;  // readapt: place -> run file
  std::uint64_t budget = 0;  // readapt: evaluations before censoring
};

struct StudySpec {
  std::string source;  // the study file as given
  std::string name;
  std::string reference;  // treatment the report compares curves against (default: the first)
  std::vector<std::uint64_t> seeds;
  std::vector<StudyTreatment> treatments;
  std::vector<StudyMeasure> measures;
};

// Reads and checks a study file (and every run file it names, with its overrides). Throws
// InputError "FILE:LINE: key 'K': fault".
StudySpec load_study_file(const std::string& path);

// The names of the measures one run gets, in order (e.g. "coverage", "probe.maze.area_covered",
// "readapt.maze.middle").
std::vector<std::string> measure_names(const StudyMeasure& measure);

}  // namespace tessera
