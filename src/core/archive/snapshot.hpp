// Everything an archive file holds, as plain data: the meeting point of the engine (which fills
// and restores it) and the HDF5 layer (which writes and reads it). Field names follow the archive
// format (docs/archive-format.md); `resume` carries the extra state a checkpoint needs to
// continue exactly.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "core/base/rng.hpp"
#include "core/base/types.hpp"

namespace tessera {

// State needed to continue a run bit-identically, stored in the /resume group (readers that only
// want the results may ignore it).
struct ResumeState {
  std::string algorithm;                 // "map-elites", "novelty", ...
  std::uint64_t next_batch = 0;          // index of the next batch (keys the random streams)
  std::map<std::string, std::uint64_t> counters;        // invalid, out_of_bounds, ...
  std::map<std::string, std::vector<double>> arrays;    // emitter / algorithm state
};

// Behaviours kept beside the elites, without cells: the novelty archive of a population search
// (/novelty_archive), M rows.
struct BehaviourRows {
  std::vector<double> genome;        // [M * G]
  std::vector<double> descriptor;    // [M * D]
  std::vector<double> fitness;       // [M]
  std::vector<std::uint64_t> birth;  // [M]
  std::size_t size() const { return fitness.size(); }
};

struct ArchiveSnapshot {
  // Root attributes. format_version is that of the file read (0 when not read from a file);
  // writers always write the current version.
  std::int64_t format_version = 0;
  std::string problem;
  std::string config;        // the whole resolved run file, TOML
  std::uint64_t seed = 0;
  std::uint64_t evaluations = 0;
  std::string tool_version;
  // How the run's random streams draw normal deviates (root attribute random_streams; absent in
  // older files, which used version 1).
  std::int64_t random_streams = kLatestStreamVersionNumber;

  // /space
  std::string space_kind;    // "grid" | "cvt" | "unstructured"
  Bounds descriptor_bounds;
  std::vector<std::string> descriptor_names;
  std::vector<std::int64_t> resolution;  // grid only
  std::vector<double> centroids;         // cvt only, [K * D]

  // /genome
  Bounds genome_bounds;

  // /elites, N rows
  std::vector<std::int64_t> cell;
  std::vector<double> genome;       // [N * G]
  std::vector<double> descriptor;   // [N * D]
  std::vector<double> fitness;
  std::vector<std::uint64_t> birth;
  // The extra figures each elite's evaluation returned, [N * E]; NaN where not recorded (elites
  // read from a format 1 file). Format 1 files have E = 0.
  std::vector<std::string> extra_names;  // [E]
  std::vector<double> extras;            // [N * E]

  // /history, T rows. fitness_floor is the problem's lowest possible fitness: the QD-score sums
  // fitness - fitness_floor over the elites.
  std::vector<HistoryRow> history;
  double fitness_floor = 0.0;

  // Population searches only (format 2 and later).
  std::optional<BehaviourRows> novelty_archive;

  std::optional<ResumeState> resume;

  std::size_t elite_count() const { return fitness.size(); }
  std::size_t genome_size() const { return genome_bounds.size(); }
  std::size_t descriptor_size() const { return descriptor_bounds.size(); }
  std::size_t extra_size() const { return extra_names.size(); }
  // Extra figure `e` of elite `i` (NaN: not recorded).
  double extra(std::size_t i, std::size_t e) const { return extras[i * extra_size() + e]; }
  // Column of the extra figure called `name`, if the elites keep one.
  std::optional<std::size_t> extra_index(const std::string& name) const;
  std::int64_t cell_count() const;  // grid: product of resolution; cvt: K; unstructured: N
};

}  // namespace tessera
