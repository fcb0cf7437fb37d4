// The search loop's common parts: settings, counters and the interface every algorithm
// (MAP-Elites, novelty search, controls) implements so the commands can drive, checkpoint and
// resume any of them the same way.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "core/archive/archive.hpp"
#include "core/archive/snapshot.hpp"
#include "core/base/rng.hpp"
#include "core/base/types.hpp"

namespace tessera {

// Genomes a run starts from instead of uniform random ones (another run's elites): the initial
// candidates copy them in turn, or draw each parameter from that parameter's observed values
// (per-parameter resampling, used by the matched random control).
struct StartGenomes {
  std::vector<double> genomes;  // count x genome size, row-major
  std::size_t count = 0;
  bool resample = false;
};

// Fills fitness, descriptors, valid and extras of every candidate of a batch (in parallel).
using EvaluateFn = std::function<void(Batch&)>;
// Fills them for candidates [first, first + count) on the calling thread; may be called from
// several threads at once on disjoint ranges. Given by evaluators that run in this process's
// threads, so that a search can make, evaluate and place a chunk of a batch in one parallel pass.
using EvaluateRangeFn = std::function<void(Batch&, std::size_t first, std::size_t count)>;

struct SearchSettings {
  std::uint64_t seed = 1;
  std::size_t batch = 256;             // candidates per batch
  std::uint64_t evaluations = 100000;  // budget: total evaluations
  std::uint64_t initial = 0;           // random genomes first; 0 = one batch
  std::uint64_t effective_initial() const { return initial == 0 ? batch : initial; }
  std::optional<double> stop_fitness;         // stop once the max fitness reaches it
  std::shared_ptr<const StartGenomes> start;  // initial genomes from elites; null = uniform
  // New runs draw with the latest streams; a resumed run keeps the version its archive records.
  StreamVersion streams = kLatestStreamVersion;
};

// Initial candidate `index` (its global index): uniform within the bounds, or from `start`.
void initial_genome(const StartGenomes* start, const Bounds& bounds, std::uint64_t index, Rng& rng,
                    std::span<double> out);

struct SearchCounters {
  std::uint64_t evaluations = 0;
  std::uint64_t invalid = 0;        // NaN/inf fitness or descriptor, or failed evaluation
  std::uint64_t out_of_bounds = 0;  // descriptors clamped into the space
  std::uint64_t new_cells = 0;
  std::uint64_t improvements = 0;
};

// What the progress line and the summary show.
struct SearchFigures {
  std::uint64_t evaluations = 0;
  std::uint64_t budget = 0;
  double coverage = 0.0;
  double qd_score = 0.0;
  double max_fitness = 0.0;
  std::size_t elites = 0;
};

class SearchAlgorithm {
 public:
  virtual ~SearchAlgorithm() = default;
  virtual std::string name() const = 0;
  bool finished() const {
    if (counters().evaluations >= settings().evaluations) return true;
    const auto& stop = settings().stop_fitness;
    return stop && !history().empty() && history().back().max_fitness >= *stop;
  }
  // One batch: make candidates, evaluate them, update the archive, append a history row.
  virtual void step() = 0;
  virtual const SearchSettings& settings() const = 0;
  virtual const SearchCounters& counters() const = 0;
  virtual const std::vector<HistoryRow>& history() const = 0;
  virtual SearchFigures figures() const = 0;
  virtual void set_budget(std::uint64_t evaluations) = 0;
  // Writes elites, space, history and the resume state into `out` (root attributes such as the
  // problem name and config are the caller's).
  virtual void save(ArchiveSnapshot& out) const = 0;
  // Continues from a saved snapshot; throws std::invalid_argument when it does not fit.
  virtual void restore(const ArchiveSnapshot& in) = 0;
};

// Offers candidate j of an evaluated batch to `archive` and keeps the running figures every
// search reports in step with it: the counters, the QD-score (kept incrementally) and the max
// fitness over valid candidates (which equals the max over elites: elites only give way to
// better ones). Shared by every algorithm so they count alike.
InsertResult offer_candidate(EliteArchive& archive, const Batch& batch, std::size_t j,
                             std::uint64_t birth, double qd_offset, SearchCounters& counters,
                             double& qd_score, double& max_fitness);
// The same with the candidate already placed (EliteArchive::place, on any thread).
InsertResult offer_candidate(EliteArchive& archive, const Placement& placement, const Batch& batch,
                             std::size_t j, std::uint64_t birth, double qd_offset,
                             SearchCounters& counters, double& qd_score, double& max_fitness);

// The history row after a batch. Before the first elite the max fitness is the lowest possible
// one, keeping the stored value finite.
HistoryRow history_row(const EliteArchive& archive, std::uint64_t evaluations, double qd_score,
                       double max_fitness, double qd_offset);

// The progress figures of a search: the history row it would write now, plus budget and size.
SearchFigures search_figures(const EliteArchive& archive, const SearchCounters& counters,
                             std::uint64_t budget, double qd_score, double max_fitness,
                             double qd_offset, std::size_t elites);

// Counters <-> ResumeState, shared by the algorithms.
void save_counters(const SearchCounters& counters, ResumeState& state);
SearchCounters load_counters(const ResumeState& state, std::uint64_t evaluations);

}  // namespace tessera
