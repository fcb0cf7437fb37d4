// A few elites that stand for the whole map: the fittest first, then each time the elite farthest
// from all those already chosen (greedy farthest-point selection, Gonzalez 1985, a
// 2-approximation of the k-centre problem). Distances are Euclidean over descriptors scaled by
// the descriptor box, so that every dimension counts alike whatever its units.
#pragma once

#include <cstddef>
#include <vector>

#include "core/archive/snapshot.hpp"

namespace tessera {

// Up to `count` elite rows of `snapshot`, in the order chosen. Ties (equal fitness for the first,
// equal distance later) go to the row stored first, so the choice is deterministic.
std::vector<std::size_t> spread_elites(const ArchiveSnapshot& snapshot, std::size_t count);

}  // namespace tessera
