// The runs of a study: one per (treatment, replicate), plus one per re-adaptation place of each,
// each a whole `tessera illuminate` run in its own folder. A run's command is made when it
// starts, because matched controls and re-adaptations read the archive of the run they need.
#pragma once

#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <vector>

#include "io/study_file.hpp"

namespace tessera::cli {

struct StudyJob {
  std::size_t treatment = 0;
  std::uint64_t seed = 0;
  std::string name;                // e.g. "novelty seed-3" or "novelty seed-3 readapt maze.middle"
  std::filesystem::path dir;       // holds archive.h5, log.txt and the done marker
  std::vector<std::size_t> needs;  // jobs whose archives this one starts from
  std::size_t measure = 0;         // re-adaptation: the measure and its place
  std::size_t place = 0;
  bool readapt = false;
  // `illuminate` arguments (without the executable, --threads and --quiet) for a fresh start.
  std::function<std::vector<std::string>()> fresh_args;
  std::filesystem::path archive() const { return dir / "archive.h5"; }
  std::filesystem::path done_marker() const { return dir / "done"; }
  std::filesystem::path failed_marker() const { return dir / "failed"; }
  bool done() const;
};

struct StudyPlan {
  std::vector<StudyJob> jobs;
  std::size_t main_runs = 0;  // jobs [0, main_runs) are the (treatment, replicate) runs, in
                              // treatment-major order: the --only indices
  // One line per run and what makes it, so that a folder is never continued with another study.
  std::string fingerprint;
};

// Folder of the run of treatment `label` with `seed`.
std::filesystem::path run_dir(const std::filesystem::path& out, const std::string& label,
                              std::uint64_t seed);

StudyPlan make_plan(const StudySpec& spec, const std::filesystem::path& out);

// Value of a string for a --set override (TOML basic string).
std::string toml_string(const std::string& text);

}  // namespace tessera::cli
