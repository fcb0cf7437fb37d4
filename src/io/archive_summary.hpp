// The figures `tessera inspect` shows about an archive, computed from its snapshot, and their
// stable JSON form (header "format": "tessera-inspect", "version": 2). Other commands that report
// on an archive reuse both.
//
// JSON form, version 2 (every key always present; null where the archive holds no such thing):
//   format "tessera-inspect", version 2, file, archive_format (the file's format version),
//   problem, tool_version, seed, random_streams, evaluations,
//   space {kind, cells, dimensions, lower[D], upper[D], names[D], resolution[D] (grid) | null},
//   genome_size, extra_names[E], elites, coverage, qd_score, fitness_floor,
//   max_fitness (null when no elites),
//   best {index, cell, fitness, birth, descriptor[D], genome[G], extras[E] (null where not
//   recorded)} | null,
//   novelty_archive (rows of a population search's novelty archive) | null,
//   counts {invalid, out_of_bounds (null when the archive has no /resume), failures {reason: n}},
//   history_rows, resume {algorithm, next_batch} | null.
// Version 1 had no archive_format, extra_names, best.extras nor novelty_archive, and called
// fitness_floor qd_offset. random_streams was added within version 2 (a key more, none changed).
#pragma once

#include <cstddef>
#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "core/archive/snapshot.hpp"

namespace tessera {

struct BestElite {
  std::size_t index = 0;  // row in /elites
  std::int64_t cell = 0;
  double fitness = 0.0;
  std::uint64_t birth = 0;
  std::vector<double> descriptor;
  std::vector<double> genome;
  std::vector<double> extras;  // NaN where not recorded
};

struct ArchiveSummary {
  std::string file;
  std::int64_t archive_format = 0;
  std::string problem;
  std::string tool_version;
  std::uint64_t seed = 0;
  std::int64_t random_streams = 0;  // the stream version the run drew with (root attribute)
  std::uint64_t evaluations = 0;

  std::string space_kind;
  std::int64_t cells = 0;
  Bounds descriptor_bounds;
  std::vector<std::string> descriptor_names;
  std::vector<std::int64_t> resolution;  // grid only
  std::size_t genome_size = 0;
  std::vector<std::string> extra_names;

  std::size_t elites = 0;
  double coverage = 0.0;  // elites / cells (0 for an empty unstructured archive)
  double qd_score = 0.0;  // sum over elites, in stored order, of (fitness - fitness_floor)
  double fitness_floor = 0.0;
  std::optional<double> max_fitness;  // from the elites themselves
  std::optional<BestElite> best;      // the fittest elite, the first in stored order on ties
  std::optional<std::size_t> novelty_archive;  // rows, population searches only

  std::optional<std::uint64_t> invalid;  // /resume counters, when present
  std::optional<std::uint64_t> out_of_bounds;
  std::map<std::string, std::uint64_t> failures;  // counters named "failed:<reason>"

  std::size_t history_rows = 0;
  std::optional<std::string> algorithm;  // /resume, when the archive can be resumed
  std::optional<std::uint64_t> next_batch;
};

ArchiveSummary summarize_archive(const ArchiveSnapshot& snapshot, const std::string& file);

// Keys in the documented order (ordered_json), header first.
void to_json(nlohmann::ordered_json& out, const ArchiveSummary& summary);

}  // namespace tessera
