// Run files (TOML): what to illuminate and how. Every key is checked against a schema: an
// unknown key, a wrong type or an impossible value is refused with the file, line and key.
// Defaults are filled in, so the resolved text stored in an archive re-runs the same search.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "core/archive/cvt.hpp"
#include "core/search/emitter_mixture.hpp"
#include "core/search/population_search.hpp"
#include "core/search/search.hpp"
#include "core/search/variation_emitter.hpp"
#include "problems/problem_spec.hpp"

namespace tessera {

struct SpaceConfig {
  std::string kind = "grid";               // grid | cvt
  std::vector<std::int64_t> resolution;    // grid: one per dimension, or one for all
  CvtSettings cvt;                         // cvt
};

struct CheckpointConfig {
  std::uint64_t every_evaluations = 0;  // 0 = only by time
  double every_seconds = 300.0;         // 0 = only by evaluations
  bool compress = false;                // numeric datasets through shuffle + deflate
};

struct RunConfig {
  std::string source;          // file the run came from (path or "archive NAME")
  std::string base_dir;        // folder that relative paths resolve against
  ProblemSpec problem;
  std::string algorithm = "map-elites";
  SearchSettings search;
  VariationSettings variation;
  std::vector<EmitterSpec> emitters;  // [[search.emitters]]; empty = one variation emitter
  PopulationSettings population;  // novelty, novelty-lc, objective, random
  SpaceConfig space;
  CheckpointConfig checkpoint;
  std::string start_from;       // archive whose elites start the search (absolute); empty = none
  bool start_resample = false;  // draw per parameter from them instead of copying them
  std::string resolved_toml;   // the whole run file with defaults, as stored in archives
};

// Reads a run file and applies KEY=VALUE overrides (VALUE in TOML syntax; bare words are
// strings). Throws InputError "FILE:LINE: key 'K': fault".
RunConfig load_run_file(const std::string& path, const std::vector<std::string>& overrides = {});

// Same from text (used for the config stored in an archive); relative paths resolve against
// base_dir.
RunConfig parse_run_text(const std::string& text, const std::string& source,
                         const std::string& base_dir,
                         const std::vector<std::string>& overrides = {});

// Names of the search algorithms a run file may choose.
std::vector<std::string> known_algorithms();

}  // namespace tessera
