#include "core/archive/archive.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "core/base/finite.hpp"

namespace tessera {
namespace {

// Largest row storage reserved up front (address space, not memory in use).
constexpr std::size_t kReserveBytes = std::size_t{256} << 20;

}  // namespace

const char* to_string(Insertion outcome) {
  switch (outcome) {
    case Insertion::new_cell:
      return "new-cell";
    case Insertion::improved:
      return "improved";
    case Insertion::rejected:
      return "rejected";
    case Insertion::invalid:
      return "invalid";
  }
  return "?";
}

EliteArchive::EliteArchive(std::shared_ptr<const DescriptorSpace> space, std::size_t genome_size,
                           std::size_t extra_size)
    : space_(std::move(space)),
      genome_size_(genome_size),
      descriptor_size_(space_->dimensions()),
      extra_size_(extra_size),
      grid_(dynamic_cast<const GridSpace*>(space_.get())) {
  if (space_->cell_count() > kMaxCells)
    throw std::invalid_argument("archive: more than 2^28 cells");
  slot_of_cell_.assign(static_cast<std::size_t>(space_->cell_count()), -1);
  // Room for an elite in every cell, when that is modest: a growing archive then never moves
  // its rows (each move copies them all into freshly faulted pages, the main cost of filling a
  // large grid). Only address space is taken; pages are touched as elites arrive.
  const auto cells = static_cast<std::size_t>(space_->cell_count());
  const std::size_t row_bytes =
      sizeof(double) * (genome_size_ + descriptor_size_ + extra_size_ + 2) + sizeof(std::int64_t);
  if (cells * row_bytes <= kReserveBytes) {
    cells_.reserve(cells);
    fitness_.reserve(cells);
    birth_.reserve(cells);
    genomes_.reserve(cells * genome_size_);
    descriptors_.reserve(cells * descriptor_size_);
    extras_.reserve(cells * extra_size_);
  }
}

InsertResult EliteArchive::insert(std::span<const double> genome, double fitness,
                                  std::span<const double> descriptor, std::uint64_t birth,
                                  bool valid, std::span<const double> extras) {
  return insert_placed(place(genome, fitness, descriptor, valid), genome, fitness, descriptor,
                       birth, extras);
}

Placement EliteArchive::place(std::span<const double> genome, double fitness,
                              std::span<const double> descriptor, bool valid) const {
  Placement out;
  if (!(valid && std::isfinite(fitness) && all_finite(descriptor) && all_finite(genome)))
    return out;
  const CellLookup lookup = grid_ ? grid_->cell_of(descriptor) : space_->cell_of(descriptor);
  out.cell = lookup.cell;
  out.clamped = lookup.clamped;
  return out;
}

void EliteArchive::mark_if_beaten(Placement& placement, double fitness) const {
  if (thresholds_on_ || placement.cell < 0) return;
  const auto slot = slot_of_cell_[static_cast<std::size_t>(placement.cell)];
  placement.beaten = slot >= 0 && !(fitness > fitness_[static_cast<std::size_t>(slot)]);
}

InsertResult EliteArchive::insert_placed(const Placement& lookup, std::span<const double> genome,
                                         double fitness, std::span<const double> descriptor,
                                         std::uint64_t birth, std::span<const double> extras) {
  check_extras(extras);
  if (lookup.settled()) return settled_result(lookup);
  InsertResult result;
  result.cell = lookup.cell;
  result.clamped = lookup.clamped;
  const auto slot = slot_of_cell_[static_cast<std::size_t>(lookup.cell)];
  std::size_t index;
  if (slot < 0) {
    index = cells_.size();
    slot_of_cell_[static_cast<std::size_t>(lookup.cell)] = static_cast<std::int32_t>(index);
    cells_.push_back(lookup.cell);
    fitness_.push_back(fitness);
    birth_.push_back(birth);
    genomes_.insert(genomes_.end(), genome.begin(), genome.end());
    descriptors_.insert(descriptors_.end(), descriptor.begin(), descriptor.end());
    extras_.resize(extras_.size() + extra_size_);
    store_extras(index, extras);
    result.outcome = Insertion::new_cell;
  } else {
    index = static_cast<std::size_t>(slot);
    if (!(fitness > fitness_[index])) {
      result.outcome = Insertion::rejected;
      return result;
    }
    result.replaced_fitness = fitness_[index];
    fitness_[index] = fitness;
    birth_[index] = birth;
    std::copy(genome.begin(), genome.end(), genomes_.begin() + index * genome_size_);
    std::copy(descriptor.begin(), descriptor.end(),
              descriptors_.begin() + index * descriptor_size_);
    store_extras(index, extras);
    result.outcome = Insertion::improved;
  }
  // An elite's descriptor always lies in its cell: out-of-bounds values are stored clamped.
  if (lookup.clamped)
    space_->clamp({descriptors_.data() + index * descriptor_size_, descriptor_size_});
  return result;
}

void EliteArchive::restore(std::int64_t cell, std::span<const double> genome, double fitness,
                           std::span<const double> descriptor, std::uint64_t birth,
                           std::span<const double> extras) {
  if (cell < 0 || cell >= space_->cell_count())
    throw std::invalid_argument("elite cell " + std::to_string(cell) + " outside 0.." +
                                std::to_string(space_->cell_count() - 1));
  if (genome.size() != genome_size_ || descriptor.size() != descriptor_size_)
    throw std::invalid_argument("elite genome or descriptor has the wrong length");
  check_extras(extras);
  auto& slot = slot_of_cell_[static_cast<std::size_t>(cell)];
  if (slot >= 0) throw std::invalid_argument("two elites in cell " + std::to_string(cell));
  slot = static_cast<std::int32_t>(cells_.size());
  cells_.push_back(cell);
  fitness_.push_back(fitness);
  birth_.push_back(birth);
  genomes_.insert(genomes_.end(), genome.begin(), genome.end());
  descriptors_.insert(descriptors_.end(), descriptor.begin(), descriptor.end());
  extras_.resize(extras_.size() + extra_size_);
  store_extras(cells_.size() - 1, extras);
}

void EliteArchive::check_extras(std::span<const double> extras) const {
  if (!extras.empty() && extras.size() != extra_size_)
    throw std::invalid_argument("elite has " + std::to_string(extras.size()) +
                                " extra figures, expected " + std::to_string(extra_size_));
}

void EliteArchive::store_extras(std::size_t index, std::span<const double> extras) {
  const auto out = extras_.begin() + static_cast<std::ptrdiff_t>(index * extra_size_);
  if (extras.empty())
    std::fill_n(out, extra_size_, std::numeric_limits<double>::quiet_NaN());
  else
    std::copy(extras.begin(), extras.end(), out);
}

std::optional<std::size_t> EliteArchive::elite_in(std::int64_t cell) const {
  if (cell < 0 || cell >= space_->cell_count()) return std::nullopt;
  const auto slot = slot_of_cell_[static_cast<std::size_t>(cell)];
  if (slot < 0) return std::nullopt;
  return static_cast<std::size_t>(slot);
}

double EliteArchive::coverage() const {
  return static_cast<double>(cells_.size()) / static_cast<double>(space_->cell_count());
}

double EliteArchive::qd_score(double offset) const {
  double sum = 0.0;
  for (double f : fitness_) sum += f - offset;
  return sum;
}

double EliteArchive::max_fitness() const {
  double best = -std::numeric_limits<double>::infinity();
  for (double f : fitness_) best = std::max(best, f);
  return best;
}

std::optional<std::size_t> EliteArchive::best() const {
  if (fitness_.empty()) return std::nullopt;
  return static_cast<std::size_t>(std::max_element(fitness_.begin(), fitness_.end()) -
                                  fitness_.begin());
}

void EliteArchive::enable_thresholds(double learning_rate, double minimum) {
  if (!(learning_rate >= 0.0 && learning_rate <= 1.0))
    throw std::invalid_argument("archive learning rate must lie in [0, 1]");
  thresholds_on_ = true;
  threshold_rate_ = learning_rate;
  threshold_minimum_ = minimum;
}

double EliteArchive::threshold_of_cell(std::int64_t cell) const {
  const auto slot = elite_in(cell);
  return slot && *slot < thresholds_.size() ? thresholds_[*slot] : threshold_minimum_;
}

double EliteArchive::update_threshold(std::int64_t cell, double fitness) {
  const auto slot = elite_in(cell);
  if (!slot) throw std::logic_error("threshold update for an empty cell");
  if (thresholds_.size() <= *slot) thresholds_.resize(*slot + 1, threshold_minimum_);
  double& t = thresholds_[*slot];
  const double before = t;
  if (fitness > t) t = (1.0 - threshold_rate_) * t + threshold_rate_ * fitness;
  return before;
}

std::vector<double> EliteArchive::thresholds() const {
  std::vector<double> out(thresholds_);
  out.resize(size(), threshold_minimum_);
  return out;
}

void EliteArchive::restore_thresholds(std::span<const double> values) {
  if (values.size() != size())
    throw std::invalid_argument("archive thresholds: " + std::to_string(values.size()) +
                                " values for " + std::to_string(size()) + " elites");
  thresholds_.assign(values.begin(), values.end());
}

}  // namespace tessera
