// MAP-Elites (Mouret & Clune 2015) over a grid or CVT archive (Vassiliades et al., IEEE TEVC
// 2018): a random initial batch, then batches of children of elites; each batch is evaluated in
// parallel and inserted in candidate order, so the run is bit-identical for any thread count.
#pragma once

#include <memory>
#include <utility>

#include "core/archive/archive.hpp"
#include "core/search/emitter.hpp"
#include "core/search/search.hpp"

namespace tessera {

class MapElitesSearch final : public SearchAlgorithm {
 public:
  MapElitesSearch(SearchSettings settings, std::shared_ptr<const DescriptorSpace> space,
                  Bounds genome_bounds, double qd_offset, std::unique_ptr<Emitter> emitter,
                  EvaluateFn evaluate, std::size_t extra_size = 0);

  std::string name() const override { return "map-elites"; }
  void step() override;
  const SearchSettings& settings() const override { return settings_; }
  const SearchCounters& counters() const override { return counters_; }
  const std::vector<HistoryRow>& history() const override { return history_; }
  SearchFigures figures() const override;
  void set_budget(std::uint64_t evaluations) override { settings_.evaluations = evaluations; }
  void save(ArchiveSnapshot& out) const override;
  void restore(const ArchiveSnapshot& in) override;

  // Lets full batches of an emitter that makes candidates independently be made, evaluated and
  // placed chunk by chunk in one parallel pass: one fork and join per batch instead of three,
  // and each child still in cache when evaluated. Same archive, bit for bit, as without.
  void set_range_evaluator(EvaluateRangeFn evaluate_range) {
    evaluate_range_ = std::move(evaluate_range);
  }

  const EliteArchive& archive() const { return archive_; }
  // The last batch and what the archive did with each candidate (for tests and emitters).
  const Batch& last_batch() const { return batch_; }
  const std::vector<InsertResult>& last_results() const { return results_; }

 private:
  void evaluate_range(std::size_t first, std::size_t count);
  void make_evaluate_place(const EmitContext& context);
  // Candidates [first, first + count) lie in one chunk of the batch (kPassChunk candidates).
  void place_range(std::size_t first, std::size_t count);
  void prepare_chunks();
  void insert_contenders(std::size_t first, std::size_t count);
  void save_partial_batch(ResumeState& state) const;
  void load_partial_batch(const ResumeState& state);

  SearchSettings settings_;
  EliteArchive archive_;
  Bounds genome_bounds_;
  double qd_offset_;
  std::unique_ptr<Emitter> emitter_;
  EvaluateFn evaluate_;
  EvaluateRangeFn evaluate_range_;  // empty: batches are made, evaluated and placed in turn
  std::size_t extra_size_;
  SearchCounters counters_;
  std::uint64_t next_batch_ = 0;
  std::size_t batch_done_ = 0;  // candidates of a batch cut by the budget already inserted
  double qd_score_ = 0.0;       // kept incrementally; restored from the last history row
  double max_fitness_;
  std::vector<HistoryRow> history_;
  Batch batch_;
  std::vector<InsertResult> results_;
  std::vector<Placement> placements_;  // of the batch's candidates, worked out in parallel
  // Per chunk of the batch: a bit per candidate the serial insertion must offer to the archive
  // (valid and not beaten), and how many of the others were invalid, and beaten but clamped.
  // A cache line each: neighbouring chunks run on different threads.
  struct alignas(64) ChunkTally {
    std::uint64_t contenders = 0;
    std::uint32_t invalid = 0;
    std::uint32_t clamped = 0;
  };
  std::vector<ChunkTally> chunk_tallies_;
  std::vector<std::uint32_t> contender_list_;  // their indices, in candidate order
};

// Fills the /space part of a snapshot from a space (grid or cvt).
void save_space(const DescriptorSpace& space, ArchiveSnapshot& out);
// Writes an elite archive into the /space and /elites parts of a snapshot (extras included;
// their names are the caller's).
void save_elites(const EliteArchive& archive, ArchiveSnapshot& out);
// Puts a snapshot's elites into an empty archive over the same space; throws
// std::invalid_argument when they do not fit.
void restore_elites(const ArchiveSnapshot& in, EliteArchive& archive);
// Builds the space a snapshot describes (grid or cvt); throws std::invalid_argument.
std::shared_ptr<const DescriptorSpace> space_from_snapshot(const ArchiveSnapshot& in);

}  // namespace tessera
