// Deterministic archive snapshots for the archive-file tests and the sample writer: every field
// of the format (docs/archive-format.md) filled with awkward but valid values (negative zero,
// subnormals, huge magnitudes, NaN and infinite extras, UTF-8 names), elites in a scrambled
// order, so that a reader that sorts, rounds or drops anything is caught.
#pragma once

#include <algorithm>
#include <cfloat>
#include <cmath>
#include <cstdint>
#include <numbers>
#include <numeric>
#include <string>
#include <vector>

#include "core/base/rng.hpp"
#include "core/archive/snapshot.hpp"

namespace tessera::testing {

struct SampleOptions {
  std::string kind = "grid";  // grid | cvt | unstructured
  std::size_t elites = 50;
  std::size_t genome = 7;
  std::size_t history = 12;
  bool resume = true;
  std::size_t extras = 3;           // extra figures per elite
  std::size_t novelty_archive = 0;  // rows of /novelty_archive (none when 0)
  std::uint64_t salt = 0;  // different salts give different contents
};

inline ArchiveSnapshot sample_snapshot(const SampleOptions& o) {
  Rng rng(0x5eed + o.salt, 17);
  ArchiveSnapshot s;
  s.problem = "arm";
  s.config = "# résumé of the run\n[problem]\nname = \"arm\"\n\n[search]\nseed = 42\n";
  s.seed = 42 + o.salt;
  // Consistent with the history below (which ends at it) and with the counters.
  s.evaluations = 1000 * (o.elites + 1) + o.salt;
  s.tool_version = "0.1.0-test";
  s.space_kind = o.kind;
  s.descriptor_bounds = {{-1.0, -2.5}, {1.0, 2.5}};
  s.descriptor_names = {"x", "höhe"};
  const std::size_t d = 2;
  // Distinct cells in a scrambled order: i * p mod cells visits every cell once when p is
  // coprime with the number of cells.
  std::size_t cells = o.elites;
  if (o.kind == "grid") {
    std::int64_t side = 1;
    while (static_cast<std::size_t>(side * side * 2) < o.elites) ++side;
    s.resolution = {side, 2 * side};
    cells = static_cast<std::size_t>(side * 2 * side);
  } else if (o.kind == "cvt") {
    cells = o.elites + 3;
    for (std::size_t k = 0; k < cells * d; ++k)
      s.centroids.push_back(
          rng.uniform(s.descriptor_bounds.lower[k % d], s.descriptor_bounds.upper[k % d]));
  }
  std::uint64_t step = 7919;  // prime
  while (cells > 0 && std::gcd<std::uint64_t>(step, cells) != 1) step += 2;
  s.genome_bounds.lower.assign(o.genome, -std::numbers::pi);
  s.genome_bounds.upper.assign(o.genome, std::numbers::pi);
  const double specials[] = {-0.0, 5e-324, DBL_MIN, -1e300, 1e-310, 0.1, -7.25};
  // Genomes stay within their bounds (the bounds themselves included).
  const double genome_specials[] = {-0.0, 5e-324, DBL_MIN, -std::numbers::pi, 1e-310, 0.1,
                                    std::numbers::pi};
  for (std::size_t i = 0; i < o.elites; ++i) {
    const auto cell = static_cast<std::int64_t>((i * step + o.salt) % cells);
    s.cell.push_back(cell);
    s.fitness.push_back(i < 7 ? specials[i] : rng.uniform(-10.0, 0.0));
    s.birth.push_back(3 * i + 1 + (o.salt << 40));
    for (std::size_t j = 0; j < o.genome; ++j)
      s.genome.push_back(j == 0 && i < 7 ? genome_specials[i] : rng.uniform(-3.0, 3.0));
    // Each descriptor lies in its own cell: a grid cell's centre (row-major, last dimension
    // fastest) or the CVT centroid itself.
    for (std::size_t j = 0; j < d; ++j) {
      const double lo = s.descriptor_bounds.lower[j], hi = s.descriptor_bounds.upper[j];
      if (o.kind == "grid") {
        const std::int64_t k = j == 0 ? cell / s.resolution[1] : cell % s.resolution[1];
        s.descriptor.push_back(lo + (static_cast<double>(k) + 0.5) * (hi - lo) /
                                        static_cast<double>(s.resolution[j]));
      } else if (o.kind == "cvt") {
        s.descriptor.push_back(s.centroids[static_cast<std::size_t>(cell) * d + j]);
      } else {
        s.descriptor.push_back(rng.uniform(lo, hi));
      }
    }
  }
  const char* extra_names[] = {"path_length", "goal_time", "état", "area"};
  for (std::size_t e = 0; e < o.extras; ++e)
    s.extra_names.push_back(e < 4 ? extra_names[e] : "extra_" + std::to_string(e));
  const double extra_specials[] = {NAN, -INFINITY, -0.0, 5e-324, INFINITY};
  for (std::size_t i = 0; i < o.elites; ++i)
    for (std::size_t e = 0; e < o.extras; ++e)
      s.extras.push_back(i < 5 && e == 1 ? extra_specials[i] : rng.uniform(-100.0, 100.0));
  if (o.novelty_archive > 0) {
    BehaviourRows b;
    for (std::size_t i = 0; i < o.novelty_archive; ++i) {
      b.fitness.push_back(i == 0 ? -0.0 : rng.uniform(-10.0, 0.0));
      b.birth.push_back(5 * i + 2);
      for (std::size_t j = 0; j < o.genome; ++j) b.genome.push_back(rng.uniform(-3.0, 3.0));
      for (std::size_t j = 0; j < d; ++j)
        b.descriptor.push_back(
            rng.uniform(s.descriptor_bounds.lower[j], s.descriptor_bounds.upper[j]));
    }
    s.novelty_archive = std::move(b);
  }
  s.fitness_floor = -std::numbers::pi * std::numbers::pi;
  // Rows end at the archive's evaluations, as a run's history does.
  const std::uint64_t spacing = o.history == 0 ? 0 : std::min<std::uint64_t>(64, s.evaluations / o.history);
  for (std::size_t t = 0; t < o.history; ++t)
    s.history.push_back({s.evaluations - (o.history - 1 - t) * spacing,
                         (t + 1.0) / (o.history + 3.0), 0.5 * t + 1e-17, -1.0 / (t + 1.0)});
  if (o.resume) {
    ResumeState r;
    r.algorithm = "map-elites";
    r.next_batch = o.history;  // one row per batch
    r.counters = {
        {"invalid", 3}, {"out_of_bounds", 5}, {"failed:timeout", 2}, {"huge", UINT64_MAX}};
    // Engine state may hold sentinels such as -inf; only the result datasets must be finite.
    r.arrays = {{"sigma", {0.5, 0.25, -0.0}}, {"empty", {}}, {"best", {-INFINITY}}};
    s.resume = r;
  }
  return s;
}

}  // namespace tessera::testing
