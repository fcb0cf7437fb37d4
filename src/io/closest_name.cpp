#include "io/closest_name.hpp"

#include <algorithm>
#include <numeric>

namespace tessera {

std::size_t edit_distance(std::string_view a, std::string_view b) {
  // One row of the dynamic-programming table at a time (Wagner & Fischer 1974).
  std::vector<std::size_t> row(b.size() + 1);
  std::iota(row.begin(), row.end(), std::size_t{0});
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      const std::size_t substitute = diagonal + (a[i - 1] == b[j - 1] ? 0 : 1);
      row[j] = std::min({above + 1, row[j - 1] + 1, substitute});
      diagonal = above;
    }
  }
  return row[b.size()];
}

std::optional<std::string> closest_name(std::string_view word,
                                        const std::vector<std::string>& candidates) {
  std::optional<std::string> best;
  std::size_t best_distance = 0;
  for (const auto& candidate : candidates) {
    const std::size_t d = edit_distance(word, candidate);
    const std::size_t longer = std::max(word.size(), candidate.size());
    if (d > 2 || 2 * d >= longer) continue;
    if (!best || d < best_distance) {
      best = candidate;
      best_distance = d;
    }
  }
  return best;
}

}  // namespace tessera
