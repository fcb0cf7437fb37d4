// The run file's emitter list, [[search.emitters]]: one table per entry, each naming a kind
// (variation, cma-me, cma-mae) and its settings. Entries are checked key by key and completed
// with their defaults in place, so the resolved run file stored in an archive re-runs the same
// mixture.
#pragma once

#include <toml++/toml.h>

#include <map>
#include <string>
#include <vector>

#include "core/search/emitter_mixture.hpp"

namespace tessera {

// Per-emitter batch when an entry gives none: 36, the per-emitter batch of the CMA-MAE paper's
// benchmarks (Fontaine & Nikolaidis 2023, from memory).
inline constexpr std::int64_t kDefaultEmitterBatch = 36;

// Reads and completes the entries. Throws InputError "SOURCE:LINE: key 'search.emitters[i].K':
// fault" (an unknown key or kind names the nearest known one when it is close), or "--set
// ASSIGNMENT: fault (...)" for a key in `overrides` (full key -> the --set assignment).
std::vector<EmitterSpec> parse_emitter_entries(
    toml::array& entries, const std::string& source,
    const std::map<std::string, std::string>& overrides = {});

}  // namespace tessera
