// The log of a recovery by trial and error (`tessera adapt --log FILE.h5`), an HDF5 file of its
// own beside the archive it drew from:
//   /            attrs: format="tessera-trial-log", format_version=2, tool_version, archive,
//                run_file, source ("simulation" | "process: CMD" | "operator"), prior
//   /trials      attrs: kappa, stop_gap, good_enough (NaN when none), expected_best,
//                       expected_span, length_scale, signal_variance, noise, max_trials,
//                       stop_reason, chosen (0-based row of the chosen trial, -1 when none),
//                       brute_force_best (NaN unless every elite was evaluated for reference)
// (Format 1 had stop_fraction instead of stop_gap ... expected_span, and no brute_force_best.)
//   /trials/cell                 int64   [T]     the elite's cell in the archive
//   /trials/elite                uint64  [T]     the elite's row in /elites
//   /trials/prior                float64 [T]     the map's prediction
//   /trials/predicted            float64 [T]     posterior mean when the trial was chosen
//   /trials/sigma                float64 [T]     posterior standard deviation then
//   /trials/measured             float64 [T]     performance on the damaged robot
//   /trials/valid                uint8   [T]     0 = the trial failed (measured = lowest fitness)
//   /trials/genome               float64 [T, G]
//   /trials/descriptor           float64 [T, D]  the elite's descriptor in the map
//   /trials/measured_descriptor  float64 [T, D]  as measured (NaN when the source gave none)
// Written whole to a temporary name and renamed, like archives, so a reader never sees half a log.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

namespace tessera {

struct TrialRecord {
  std::int64_t cell = 0;
  std::uint64_t elite = 0;
  double prior = 0.0;
  double predicted = 0.0;
  double sigma = 0.0;
  double measured = 0.0;
  bool valid = true;
  std::vector<double> genome;
  std::vector<double> descriptor;
  std::vector<double> measured_descriptor;
};

struct TrialLog {
  std::string archive;
  std::string run_file;
  std::string source;
  std::string prior;
  double kappa = 0.0;
  double stop_gap = 0.0;
  double good_enough = 0.0;       // NaN when none
  double expected_best = 0.0;     // the highest prior
  double expected_span = 0.0;     // highest minus lowest prior
  double brute_force_best = 0.0;  // NaN when not computed
  double length_scale = 0.0;
  double signal_variance = 0.0;
  double noise = 0.0;
  std::uint64_t max_trials = 0;
  std::string stop_reason;
  std::int64_t chosen = -1;
  std::size_t genome_size = 0;
  std::size_t descriptor_size = 0;
  std::vector<TrialRecord> trials;
};

// Throws tessera::InputError "PATH: cannot write the trial log: reason"; a previous file at
// `path` is then left intact.
void write_trial_log(const std::string& path, const TrialLog& log);

// What `tessera inspect` shows of a trial log.
struct TrialLogSummary {
  std::int64_t format_version = 0;
  std::string tool_version, archive, run_file, source, prior, stop_reason;
  std::uint64_t max_trials = 0;
  std::int64_t chosen = -1;
  std::vector<std::int64_t> cell;
  std::vector<double> measured;
};

// The summary when `path` is an HDF5 file whose root says format="tessera-trial-log"; nothing
// otherwise (not HDF5, or another kind of file). Throws tessera::InputError when it is a trial
// log that cannot be read.
std::optional<TrialLogSummary> read_trial_log_summary(const std::string& path);

}  // namespace tessera
