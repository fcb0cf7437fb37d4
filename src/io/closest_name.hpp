// "Did you mean ...?" for a misspelt name: the known name nearest by edit distance.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace tessera {

// Levenshtein distance: the fewest single-character insertions, deletions and substitutions
// that turn `a` into `b`.
std::size_t edit_distance(std::string_view a, std::string_view b);

// The candidate nearest `word` by edit distance (the first on ties), when it is close enough to
// be a likely misspelling: at most 2 edits, and fewer than half of the longer name's letters.
std::optional<std::string> closest_name(std::string_view word,
                                        const std::vector<std::string>& candidates);

}  // namespace tessera
