// Population-based searches that share one generational loop and differ only in how parents are
// chosen and who survives:
//   novelty     tournament selection on novelty alone (Lehman & Stanley, EC 2011)
//   novelty-lc  NSGA-II on (novelty, local competition) (Lehman & Stanley, GECCO 2011)
//   objective   tournament selection on fitness: the plain objective-driven control
//   random      random genomes only: the second control
// Each batch is one generation of `batch` children made by the run's variation operator from
// parents of the current population. Generational replacement (the children become the
// population), except novelty-lc, which keeps the best `batch` of parents and children as
// NSGA-II does.
//
// Every algorithm keeps the same novelty archive (for objective and random it only watches).
// Every evaluation is also offered to a MAP-Elites archive over the run's reference space (its
// [space] grid or CVT), which only measures: the history's coverage, QD-score and max fitness
// are comparable with MAP-Elites runs. That reference map is saved as the archive's elites (the
// best behaviour found per cell), the novelty archive beside it (docs/archive-format.md).
//
// Random streams are keyed by (seed, batch, candidate), scoring depends only on the point set and
// archive updates are serial, so runs are bit-identical for any thread count and resume exactly.
#pragma once

#include <memory>
#include <string>

#include "core/archive/archive.hpp"
#include "core/search/novelty.hpp"
#include "core/search/nsga2.hpp"
#include "core/base/rng.hpp"
#include "core/search/search.hpp"
#include "core/search/variation_emitter.hpp"

namespace tessera {

enum class PopulationAlgorithm { novelty, novelty_lc, objective, random };

// "novelty", "novelty-lc", "objective", "random".
const char* to_string(PopulationAlgorithm algorithm);
bool is_population_algorithm(const std::string& name);
PopulationAlgorithm parse_population_algorithm(const std::string& name);  // invalid_argument

struct PopulationSettings {
  // Parents are the best of 3 drawn at random (with replacement); common practice for small
  // populations, strong enough for the objective control to converge.
  std::size_t tournament = 3;
  NoveltySettings novelty;
};

class PopulationSearch final : public SearchAlgorithm {
 public:
  PopulationSearch(PopulationAlgorithm algorithm, SearchSettings settings,
                   PopulationSettings population, VariationSettings variation,
                   std::shared_ptr<const DescriptorSpace> reference, Bounds genome_bounds,
                   double qd_offset, EvaluateFn evaluate, std::size_t extra_size = 0);

  std::string name() const override { return to_string(algorithm_); }
  void step() override;
  const SearchSettings& settings() const override { return settings_; }
  const SearchCounters& counters() const override { return counters_; }
  const std::vector<HistoryRow>& history() const override { return history_; }
  SearchFigures figures() const override;
  void set_budget(std::uint64_t evaluations) override { settings_.evaluations = evaluations; }
  void save(ArchiveSnapshot& out) const override;
  void restore(const ArchiveSnapshot& in) override;

  PopulationAlgorithm algorithm() const { return algorithm_; }
  const NoveltyArchive& behaviours() const { return archive_; }
  const EliteArchive& reference() const { return reference_; }
  const Batch& last_batch() const { return batch_; }
  // Novelty and local competition of the last batch's children, as scored when they were made.
  const std::vector<double>& last_novelty() const { return last_novelty_; }
  const std::vector<double>& last_competition() const { return last_competition_; }
  std::size_t population_size() const { return population_.size(); }

  // Seconds spent scoring neighbours (k-d tree build and queries), for the benchmark.
  double scoring_seconds() const { return scoring_seconds_; }

 private:
  // Members of the population, structure of arrays (rank and crowding: novelty-lc only).
  struct Group {
    std::vector<double> genome, descriptor, fitness, valid, novelty, competition, rank, crowding;
    std::size_t size() const { return fitness.size(); }
    void clear();
    void append(const Group& from, std::size_t i, std::size_t g, std::size_t d);
  };

  void make_children(std::size_t count);
  std::size_t tournament(Rng& rng) const;
  bool better(std::size_t a, std::size_t b) const;
  void score(Group& pool);
  void restore_format1(const ArchiveSnapshot& in);

  PopulationAlgorithm algorithm_;
  SearchSettings settings_;
  PopulationSettings population_settings_;
  VariationSettings variation_;
  Bounds genome_bounds_;
  double qd_offset_;
  EvaluateFn evaluate_;
  std::size_t extra_size_;
  NoveltyArchive archive_;
  EliteArchive reference_;
  Group population_;
  SearchCounters counters_;
  std::uint64_t next_batch_ = 0;
  double qd_score_ = 0.0;
  double max_fitness_;
  std::vector<HistoryRow> history_;
  Batch batch_;
  std::vector<double> last_novelty_, last_competition_;
  double scoring_seconds_ = 0.0;
};

}  // namespace tessera
