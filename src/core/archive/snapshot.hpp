// Everything an archive file holds, as plain data: the meeting point of the engine (which fills
// and restores it) and the HDF5 layer (which writes and reads it). Field names follow archive
// format 1 (DESIGN.md); `resume` carries the extra state a checkpoint needs to continue exactly.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "core/base/types.hpp"

namespace tessera {

// State needed to continue a run bit-identically, stored in the /resume group (a Tessera
// extension of format 1 that readers of the normative part may ignore).
struct ResumeState {
  std::string algorithm;                 // "map-elites", "novelty", ...
  std::uint64_t next_batch = 0;          // index of the next batch (keys the random streams)
  std::map<std::string, std::uint64_t> counters;        // invalid, out_of_bounds, ...
  std::map<std::string, std::vector<double>> arrays;    // emitter / algorithm state
};

struct ArchiveSnapshot {
  // Root attributes.
  std::string problem;
  std::string config;        // the whole resolved run file, TOML
  std::uint64_t seed = 0;
  std::uint64_t evaluations = 0;
  std::string tool_version;

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

  // /history, T rows
  std::vector<HistoryRow> history;
  double qd_offset = 0.0;

  std::optional<ResumeState> resume;

  std::size_t elite_count() const { return fitness.size(); }
  std::size_t genome_size() const { return genome_bounds.size(); }
  std::size_t descriptor_size() const { return descriptor_bounds.size(); }
  std::int64_t cell_count() const;  // grid: product of resolution; cvt: K; unstructured: N
};

}  // namespace tessera
