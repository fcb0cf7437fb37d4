// The elite archive: at most one elite per cell of a descriptor space, the best found there.
#pragma once

#include <cstdint>
#include <limits>
#include <memory>
#include <optional>
#include <span>
#include <vector>

#include "core/archive/row_allocator.hpp"
#include "core/archive/space.hpp"
#include "core/base/prefetch.hpp"

namespace tessera {

// What happened to one candidate offered to the archive.
enum class Insertion : std::uint8_t {
  new_cell,  // entered an empty cell
  improved,  // replaced a worse elite
  rejected,  // the incumbent was at least as good (ties keep the incumbent)
  invalid,   // fitness or descriptor not finite, or the evaluation failed
};

const char* to_string(Insertion outcome);

struct InsertResult {
  Insertion outcome = Insertion::rejected;
  bool clamped = false;    // descriptor was outside the bounds (counted, sent to an edge cell)
  std::int64_t cell = -1;  // -1 when invalid
  double replaced_fitness = 0.0;  // the former elite's fitness when outcome == improved
  double threshold = 0.0;        // with thresholds: the cell's acceptance threshold before this one
  bool above_threshold = false;  // with thresholds: fitness exceeded it (the threshold moved)
};

// Where a candidate would go, worked out before the serial insertion: read-only, so a batch is
// placed on many threads and the serial part only compares and copies.
struct Placement {
  std::int64_t cell = -1;  // -1 when invalid (fitness, descriptor or genome not finite, or failed)
  bool clamped = false;    // descriptor was outside the bounds (sent to an edge cell)
  // The cell's elite was already at least as fit when placed. Elites only get fitter, so the
  // insertion will reject the candidate: late in a run most are, and the serial part then
  // need not touch the cell at all. Never set while acceptance thresholds are kept.
  bool beaten = false;
  // Invalid or beaten: the result is known without the archive.
  bool settled() const { return cell < 0 || beaten; }
};

// The result of a settled placement: invalid, or rejected in its cell.
inline InsertResult settled_result(const Placement& placement) {
  InsertResult result;
  if (placement.cell < 0) {
    result.outcome = Insertion::invalid;
    return result;
  }
  result.outcome = Insertion::rejected;
  result.cell = placement.cell;
  result.clamped = placement.clamped;
  return result;
}

// Elites are kept in the order their cells were first filled. That order is part of the state
// (uniform parent selection indexes into it), so it is saved and restored with the archive.
class EliteArchive {
 public:
  // Every elite keeps `extra_size` extra figures of its evaluation (path length, reason codes,
  // ...), so that nothing has to be re-evaluated to recover them.
  EliteArchive(std::shared_ptr<const DescriptorSpace> space, std::size_t genome_size,
               std::size_t extra_size = 0);

  // The one insertion path for every space kind. `extras` holds extra_size() values, or none
  // (then the elite's extras are NaN: not recorded).
  InsertResult insert(std::span<const double> genome, double fitness,
                      std::span<const double> descriptor, std::uint64_t birth, bool valid = true,
                      std::span<const double> extras = {});

  // The same insertion in two steps: place() may run on many threads at once (it reads only the
  // space); insert_placed() is the serial part and takes place()'s answer for the same candidate.
  Placement place(std::span<const double> genome, double fitness,
                  std::span<const double> descriptor, bool valid = true) const;
  // Between the two, from many threads while no insertion runs: sets placement.beaten when the
  // cell's elite is already at least as fit (prefetch_fitness() first on a large archive).
  void mark_if_beaten(Placement& placement, double fitness) const;
  InsertResult insert_placed(const Placement& placement, std::span<const double> genome,
                             double fitness, std::span<const double> descriptor,
                             std::uint64_t birth, std::span<const double> extras = {});
  // Hints for the serial insertion of a large archive, issued a few candidates ahead so that
  // the memory they touch is on its way: the cell's slot, then (once that is in) its elite.
  void prefetch_slot(std::int64_t cell) const {
    if (cell >= 0) __builtin_prefetch(slot_of_cell_.data() + cell);
  }
  void prefetch_fitness(std::int64_t cell) const {
    if (cell < 0) return;
    const std::int32_t slot = slot_of_cell_[static_cast<std::size_t>(cell)];
    if (slot >= 0) __builtin_prefetch(fitness_.data() + slot);
  }
  void prefetch_elite(std::int64_t cell) const {
    if (cell < 0) return;
    const std::int32_t slot = slot_of_cell_[static_cast<std::size_t>(cell)];
    if (slot < 0) return;
    const auto i = static_cast<std::size_t>(slot);
    // The rows an improvement overwrites (first and last line of the genome row): a candidate
    // that gets here usually does.
    prefetch_for_write(fitness_.data() + i);
    prefetch_for_write(birth_.data() + i);
    prefetch_for_write(genomes_.data() + i * genome_size_);
    prefetch_for_write(genomes_.data() + (i + 1) * genome_size_ - 1);
    prefetch_for_write(descriptors_.data() + i * descriptor_size_);
  }

  // A hint for variation: elite i's genome will be read soon (its first and last line).
  void prefetch_genome(std::size_t i) const {
    __builtin_prefetch(genomes_.data() + i * genome_size_);
    __builtin_prefetch(genomes_.data() + (i + 1) * genome_size_ - 1);
  }

  // Puts an elite back exactly as saved (used when reading an archive file). Throws
  // std::invalid_argument if the cell is out of range or already filled. Empty `extras` are
  // stored as NaN (an archive written before elites kept their figures).
  void restore(std::int64_t cell, std::span<const double> genome, double fitness,
               std::span<const double> descriptor, std::uint64_t birth,
               std::span<const double> extras = {});

  const DescriptorSpace& space() const { return *space_; }
  std::shared_ptr<const DescriptorSpace> space_ptr() const { return space_; }
  std::size_t genome_size() const { return genome_size_; }
  std::size_t descriptor_size() const { return descriptor_size_; }
  std::size_t extra_size() const { return extra_size_; }

  std::size_t size() const { return cells_.size(); }
  bool empty() const { return cells_.empty(); }
  std::int64_t cell(std::size_t i) const { return cells_[i]; }
  double fitness(std::size_t i) const { return fitness_[i]; }
  std::uint64_t birth(std::size_t i) const { return birth_[i]; }
  std::span<const double> genome(std::size_t i) const {
    return {genomes_.data() + i * genome_size_, genome_size_};
  }
  std::span<const double> descriptor(std::size_t i) const {
    return {descriptors_.data() + i * descriptor_size_, descriptor_size_};
  }
  std::span<const double> extras(std::size_t i) const {
    return {extras_.data() + i * extra_size_, extra_size_};
  }
  // Every elite's values at once, in elite order, rows back to back (for bulk copies).
  std::span<const std::int64_t> all_cells() const { return cells_; }
  std::span<const double> all_fitness() const { return {fitness_.data(), fitness_.size()}; }
  std::span<const std::uint64_t> all_births() const { return {birth_.data(), birth_.size()}; }
  std::span<const double> all_genomes() const { return {genomes_.data(), genomes_.size()}; }
  std::span<const double> all_descriptors() const {
    return {descriptors_.data(), descriptors_.size()};
  }
  std::span<const double> all_extras() const { return extras_; }
  // Index of the elite in `cell`, if any.
  std::optional<std::size_t> elite_in(std::int64_t cell) const;

  double coverage() const;                  // filled cells / cells
  double qd_score(double offset) const;     // sum of (fitness - offset)
  double max_fitness() const;               // -inf when empty
  std::optional<std::size_t> best() const;  // index of the fittest elite (first on ties)

  // Acceptance thresholds of CMA-MAE (Fontaine & Nikolaidis, ICLR 2023), one per cell, kept
  // beside the elites (which stay the best ever found). Empty cells sit at `minimum`.
  void enable_thresholds(double learning_rate, double minimum);
  bool has_thresholds() const { return thresholds_on_; }
  double threshold_of_cell(std::int64_t cell) const;
  // For a candidate of `fitness` in `cell` (which holds an elite by now): returns the threshold
  // before, and when fitness > t moves it to (1 - learning_rate) t + learning_rate * fitness.
  double update_threshold(std::int64_t cell, double fitness);
  // Per elite, in elite order; elites without an entry yet are at the minimum.
  std::vector<double> thresholds() const;
  void restore_thresholds(std::span<const double> values);  // throws on a length mismatch

 private:
  std::shared_ptr<const DescriptorSpace> space_;
  std::size_t genome_size_;
  std::size_t descriptor_size_;
  std::size_t extra_size_;
  const GridSpace* grid_;  // the space when it is a grid: its lookup is called directly
  std::vector<std::int32_t, RowAllocator<std::int32_t>> slot_of_cell_;  // -1 = empty
  std::vector<std::int64_t> cells_;
  std::vector<double, RowAllocator<double>> fitness_;
  std::vector<std::uint64_t, RowAllocator<std::uint64_t>> birth_;
  std::vector<double, RowAllocator<double>> genomes_;
  std::vector<double, RowAllocator<double>> descriptors_;
  std::vector<double> extras_;

  void check_extras(std::span<const double> extras) const;  // none or extra_size() values
  void store_extras(std::size_t index, std::span<const double> extras);
  bool thresholds_on_ = false;
  double threshold_rate_ = 1.0;
  double threshold_minimum_ = 0.0;
  std::vector<double> thresholds_;  // by elite index, grown as cells fill
};

}  // namespace tessera
