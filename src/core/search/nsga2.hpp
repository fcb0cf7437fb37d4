// NSGA-II selection (Deb, Pratap, Agarwal & Meyarivan, IEEE TEVC 2002): rank by successive
// non-dominated fronts, then prefer the less crowded within a front. Used by novelty search with
// local competition, whose two objectives (novelty, local competition) are both maximised.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace tessera {

struct Nsga2Ranking {
  std::vector<std::size_t> rank;  // 0 = first front
  std::vector<double> crowding;   // within the row's front; +inf at a front's extremes
};

// `values` is row-major [n * objectives], every objective maximised, values finite.
Nsga2Ranking nsga2_rank(std::span<const double> values, std::size_t objectives);

// The `count` rows NSGA-II keeps: whole fronts in rank order, the last one cut by crowding
// distance (larger first, then lower row). Returned ascending.
std::vector<std::size_t> nsga2_survivors(const Nsga2Ranking& ranking, std::size_t count);

// True when row a wins a crowded-comparison tournament against row b (lower rank, or the same
// rank and larger crowding distance); false on a tie.
inline bool crowded_better(const Nsga2Ranking& r, std::size_t a, std::size_t b) {
  if (r.rank[a] != r.rank[b]) return r.rank[a] < r.rank[b];
  return r.crowding[a] > r.crowding[b];
}

}  // namespace tessera
