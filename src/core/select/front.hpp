// Non-dominated (Pareto) fronts among elites. Row a dominates row b when a is at least as good on
// every objective and strictly better on one; two rows equal on every objective do not dominate
// each other, so both stay on the front.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

#include "core/archive/snapshot.hpp"

namespace tessera {

enum class Goal { minimize, maximize };

// `values` is row-major [n * goals.size()]. Returns the rows no other row dominates, ascending.
// Two objectives: one sort and a sweep, O(n log n). Three or more: rows sorted best-first
// lexicographically, each compared with the front kept so far, O(n log n + n f m) for a front of
// f rows (a dominating row always sorts before the rows it dominates, so one pass suffices).
std::vector<std::size_t> non_dominated(std::span<const double> values, std::span<const Goal> goals);

// An objective read from an elite: its fitness, one descriptor value, or one of its stored extra
// figures (`extra`).
struct Objective {
  bool fitness = true;
  std::size_t dimension = 0;  // when !fitness: descriptor dimension, or extra figure index
  Goal goal = Goal::maximize;
  bool extra = false;
};

double objective_value(const ArchiveSnapshot& snapshot, std::size_t elite,
                       const Objective& objective);

// The elites among `rows` that no other of `rows` dominates, sorted by the first objective
// best-first (then the next objectives, then elite row).
std::vector<std::size_t> elite_front(const ArchiveSnapshot& snapshot,
                                     std::span<const std::size_t> rows,
                                     std::span<const Objective> objectives);

}  // namespace tessera
