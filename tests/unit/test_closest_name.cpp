// Did-you-mean suggestions for misspelt names (run-file keys).
#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "io/closest_name.hpp"

using tessera::closest_name;
using tessera::edit_distance;

TEST_CASE("edit distance: Levenshtein's worked examples", "[run-file]") {
  // kitten -> sitting: two substitutions and an insertion (the classic example, e.g. Wikipedia
  // "Levenshtein distance"); flaw -> lawn: 2 (same source).
  CHECK(edit_distance("kitten", "sitting") == 3);
  CHECK(edit_distance("sitting", "kitten") == 3);
  CHECK(edit_distance("flaw", "lawn") == 2);
  CHECK(edit_distance("", "abc") == 3);
  CHECK(edit_distance("abc", "") == 3);
  CHECK(edit_distance("same", "same") == 0);
  CHECK(edit_distance("neighbors", "neighbours") == 1);
}

TEST_CASE("closest name: the nearest known name, only when it is a likely misspelling",
          "[run-file]") {
  const std::vector<std::string> novelty = {"lower",       "neighbours", "raise",
                                            "raise_above", "threshold",  "window"};
  CHECK(closest_name("neighbors", novelty) == std::optional<std::string>("neighbours"));
  CHECK(closest_name("treshold", novelty) == std::optional<std::string>("threshold"));
  CHECK(closest_name("windows", novelty) == std::optional<std::string>("window"));
  // Too far from every name: no suggestion rather than a wild guess.
  CHECK_FALSE(closest_name("budget", novelty).has_value());
  CHECK_FALSE(closest_name("x", {"y"}).has_value());  // 1 edit of 1 letter is no misspelling
  // Ties keep the first candidate.
  CHECK(closest_name("rise", {"raise", "rose"}) == std::optional<std::string>("raise"));
}
