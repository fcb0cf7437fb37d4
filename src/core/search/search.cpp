#include "core/search/search.hpp"

#include <algorithm>

#include "core/search/variation.hpp"

namespace tessera {

void initial_genome(const StartGenomes* start, const Bounds& bounds, std::uint64_t index,
                    Rng& rng, std::span<double> out) {
  if (start == nullptr || start->count == 0) {
    random_genome(bounds, rng, out);
    return;
  }
  const std::size_t g = out.size();
  if (!start->resample) {
    const std::size_t row = static_cast<std::size_t>(index % start->count);
    std::copy_n(start->genomes.begin() + static_cast<std::ptrdiff_t>(row * g), g, out.begin());
    return;
  }
  for (std::size_t p = 0; p < g; ++p)
    out[p] = start->genomes[static_cast<std::size_t>(rng.below(start->count)) * g + p];
}

InsertResult offer_candidate(EliteArchive& archive, const Batch& batch, std::size_t j,
                             std::uint64_t birth, double qd_offset, SearchCounters& counters,
                             double& qd_score, double& max_fitness) {
  const Placement placement =
      archive.place(batch.genome(j), batch.fitness[j], batch.descriptor(j), batch.valid[j] != 0);
  return offer_candidate(archive, placement, batch, j, birth, qd_offset, counters, qd_score,
                         max_fitness);
}

InsertResult offer_candidate(EliteArchive& archive, const Placement& placement, const Batch& batch,
                             std::size_t j, std::uint64_t birth, double qd_offset,
                             SearchCounters& counters, double& qd_score, double& max_fitness) {
  InsertResult r = archive.insert_placed(placement, batch.genome(j), batch.fitness[j],
                                         batch.descriptor(j), birth, batch.extra(j));
  if (archive.has_thresholds() && r.outcome != Insertion::invalid) {
    r.threshold = archive.update_threshold(r.cell, batch.fitness[j]);
    r.above_threshold = batch.fitness[j] > r.threshold;
  }
  switch (r.outcome) {
    case Insertion::new_cell:
      ++counters.new_cells;
      qd_score += batch.fitness[j] - qd_offset;
      break;
    case Insertion::improved:
      ++counters.improvements;
      qd_score += batch.fitness[j] - r.replaced_fitness;
      break;
    case Insertion::rejected:
      break;
    case Insertion::invalid:
      ++counters.invalid;
      break;
  }
  if (r.outcome != Insertion::invalid) {
    if (r.clamped) ++counters.out_of_bounds;
    max_fitness = std::max(max_fitness, batch.fitness[j]);
  }
  return r;
}

HistoryRow history_row(const EliteArchive& archive, std::uint64_t evaluations, double qd_score,
                       double max_fitness, double qd_offset) {
  HistoryRow row;
  row.evaluations = evaluations;
  row.coverage = archive.coverage();
  row.qd_score = qd_score;
  row.max_fitness = archive.empty() ? qd_offset : max_fitness;
  return row;
}

SearchFigures search_figures(const EliteArchive& archive, const SearchCounters& counters,
                             std::uint64_t budget, double qd_score, double max_fitness,
                             double qd_offset, std::size_t elites) {
  const HistoryRow row =
      history_row(archive, counters.evaluations, qd_score, max_fitness, qd_offset);
  SearchFigures f;
  f.evaluations = row.evaluations;
  f.budget = budget;
  f.coverage = row.coverage;
  f.qd_score = row.qd_score;
  f.max_fitness = row.max_fitness;
  f.elites = elites;
  return f;
}

void save_counters(const SearchCounters& counters, ResumeState& state) {
  state.counters["invalid"] = counters.invalid;
  state.counters["out_of_bounds"] = counters.out_of_bounds;
  state.counters["new_cells"] = counters.new_cells;
  state.counters["improvements"] = counters.improvements;
}

SearchCounters load_counters(const ResumeState& state, std::uint64_t evaluations) {
  SearchCounters c;
  c.evaluations = evaluations;
  auto get = [&](const char* key) {
    auto it = state.counters.find(key);
    return it == state.counters.end() ? std::uint64_t{0} : it->second;
  };
  c.invalid = get("invalid");
  c.out_of_bounds = get("out_of_bounds");
  c.new_cells = get("new_cells");
  c.improvements = get("improvements");
  return c;
}

}  // namespace tessera
