#include "core/search/map_elites.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/archive/cvt.hpp"

namespace tessera {
namespace {

// Candidates between a prefetch and its use: enough to cover a memory access at the serial
// insertion's pace (a round figure, not tuned).
constexpr std::size_t kPrefetchAhead = 8;
// Chunk of a batch (the last may be shorter): a batch of 1024 gives each of two threads eight
// chunks to balance, and a plugin call per chunk stays small next to 64 cheap evaluations.
constexpr std::size_t kPassChunk = 64;
static_assert(kPassChunk <= 64, "a chunk's contenders are the bits of one 64-bit word");

}  // namespace

MapElitesSearch::MapElitesSearch(SearchSettings settings,
                                 std::shared_ptr<const DescriptorSpace> space, Bounds genome_bounds,
                                 double qd_offset, std::unique_ptr<Emitter> emitter,
                                 EvaluateFn evaluate, std::size_t extra_size)
    : settings_(settings),
      archive_(std::move(space), genome_bounds.size(), extra_size),
      genome_bounds_(std::move(genome_bounds)),
      qd_offset_(qd_offset),
      emitter_(std::move(emitter)),
      evaluate_(std::move(evaluate)),
      extra_size_(extra_size),
      max_fitness_(-std::numeric_limits<double>::infinity()) {
  if (settings_.batch == 0) throw std::invalid_argument("batch size must be at least 1");
  check_bounds(genome_bounds_, "genome bounds");
  if (const auto rate = emitter_->archive_learning_rate())
    archive_.enable_thresholds(*rate, qd_offset_);
}

void MapElitesSearch::step() {
  if (finished()) return;
  const std::uint64_t remaining = settings_.evaluations - counters_.evaluations;
  bool placed = false;  // candidates made, evaluated and placed in one pass
  if (batch_done_ == 0) {
    EmitContext context;
    context.seed = settings_.seed;
    context.batch_index = next_batch_;
    context.first_candidate = counters_.evaluations;
    context.initial = settings_.effective_initial();
    context.genome_bounds = &genome_bounds_;
    context.start = settings_.start.get();
    context.streams = settings_.streams;
    const std::size_t g = archive_.genome_size(), d = archive_.descriptor_size();
    if (evaluate_range_ && emitter_->makes_candidates_independently() &&
        remaining >= settings_.batch) {
      // Every slot is written below (results cleared chunk by chunk on the pass's threads).
      batch_.reshape(settings_.batch, g, d, extra_size_);
      results_.resize(batch_.count);
      placements_.resize(batch_.count);
      make_evaluate_place(context);
      placed = true;
    } else {
      // The whole batch is drawn even when the budget ends inside it, so that a later resume
      // can evaluate the rest exactly as one run of the larger budget would have.
      batch_.resize(settings_.batch, g, d, extra_size_);
      results_.assign(batch_.count, InsertResult{});
      emitter_->ask(archive_, context, batch_);
    }
  }
  const std::size_t first = batch_done_;
  const std::size_t count =
      static_cast<std::size_t>(std::min<std::uint64_t>(batch_.count - first, remaining));
  if (!placed) {
    placements_.resize(batch_.count);
    evaluate_range(first, count);
    // Finiteness and cell lookup read only the space: done for the whole batch on all threads.
    prepare_chunks();
    tbb::parallel_for(tbb::blocked_range<std::size_t>(first / kPassChunk,
                                                      (first + count - 1) / kPassChunk + 1, 1),
                      [&](const tbb::blocked_range<std::size_t>& chunks) {
                        for (std::size_t c = chunks.begin(); c != chunks.end(); ++c) {
                          const std::size_t from = std::max(first, c * kPassChunk);
                          const std::size_t to = std::min(first + count, (c + 1) * kPassChunk);
                          place_range(from, to - from);
                        }
                      });
  }
  insert_contenders(first, count);
  counters_.evaluations += count;
  batch_done_ = first + count == batch_.count ? 0 : first + count;
  if (batch_done_ == 0) {
    emitter_->tell(batch_, results_);
    ++next_batch_;
  }
  // A batch completed after a resume replaces the row its cut part left.
  const HistoryRow row =
      history_row(archive_, counters_.evaluations, qd_score_, max_fitness_, qd_offset_);
  if (first > 0 && !history_.empty())
    history_.back() = row;
  else
    history_.push_back(row);
}

void MapElitesSearch::prepare_chunks() {
  const std::size_t chunks = (batch_.count + kPassChunk - 1) / kPassChunk;
  // Each chunk's tally is written whole by the thread that places it; no clearing needed.
  chunk_tallies_.resize(chunks);
}

void MapElitesSearch::place_range(std::size_t first, std::size_t count) {
  // Three sweeps so that a large archive's cache misses overlap: cells (and their slots asked
  // for), then the slots' elites asked for, then the comparison.
  const std::size_t end = first + count;
  for (std::size_t j = first; j != end; ++j) {
    placements_[j] = archive_.place(batch_.genome(j), batch_.fitness[j], batch_.descriptor(j),
                                    batch_.valid[j] != 0);
    archive_.prefetch_slot(placements_[j].cell);
  }
  for (std::size_t j = first; j != end; ++j) archive_.prefetch_fitness(placements_[j].cell);
  // Invalid and beaten candidates get their answer here: the serial insertion then sees only
  // the rest, as one bit each, and never reads lines another thread wrote for the others. A
  // beaten candidate leaves the maximum fitness as it is: its cell's elite is at least as fit.
  std::uint64_t contenders = 0;
  std::uint32_t invalid = 0, clamped = 0;
  for (std::size_t j = first; j != end; ++j) {
    Placement& p = placements_[j];
    archive_.mark_if_beaten(p, batch_.fitness[j]);
    if (!p.settled()) {
      contenders |= std::uint64_t{1} << (j % kPassChunk);
      continue;
    }
    results_[j] = settled_result(p);
    if (p.cell < 0)
      ++invalid;
    else if (p.clamped)
      ++clamped;
  }
  const std::size_t chunk = first / kPassChunk;
  chunk_tallies_[chunk] = {contenders, invalid, clamped};
}

void MapElitesSearch::insert_contenders(std::size_t first, std::size_t count) {
  // Insertion is serial and in candidate order: the archive's evolution is fixed by the seed.
  const std::size_t end = first + count;
  contender_list_.clear();
  for (std::size_t c = first / kPassChunk; c * kPassChunk < end; ++c) {
    const ChunkTally& tally = chunk_tallies_[c];
    counters_.invalid += tally.invalid;
    counters_.out_of_bounds += tally.clamped;
    for (std::uint64_t bits = tally.contenders; bits != 0; bits &= bits - 1)
      contender_list_.push_back(static_cast<std::uint32_t>(
          c * kPassChunk + static_cast<std::size_t>(std::countr_zero(bits))));
  }
  // On a large grid each candidate's cell is a cache miss; asking for it a few candidates ahead
  // (slot, then elite) overlaps those misses.
  const std::size_t n = contender_list_.size();
  for (std::size_t i = 0; i < n; ++i) {
    if (i + 2 * kPrefetchAhead < n)
      archive_.prefetch_slot(placements_[contender_list_[i + 2 * kPrefetchAhead]].cell);
    if (i + kPrefetchAhead < n)
      archive_.prefetch_elite(placements_[contender_list_[i + kPrefetchAhead]].cell);
    const std::size_t j = contender_list_[i];
    results_[j] = offer_candidate(archive_, placements_[j], batch_, j,
                                  counters_.evaluations + (j - first) + 1, qd_offset_, counters_,
                                  qd_score_, max_fitness_);
  }
}

void MapElitesSearch::make_evaluate_place(const EmitContext& context) {
  // Each chunk is made, evaluated and placed by one thread while the archive stays as the batch
  // found it; candidates land at their own index, so chunking never changes the outcome. Each
  // chunk is a task of its own, so a thread that runs out takes the next single chunk.
  prepare_chunks();
  tbb::parallel_for(
      tbb::blocked_range<std::size_t>(0, chunk_tallies_.size(), 1),
      [&](const tbb::blocked_range<std::size_t>& chunks) {
        for (std::size_t c = chunks.begin(); c != chunks.end(); ++c) {
          const std::size_t from = c * kPassChunk;
          const std::size_t count = std::min(kPassChunk, batch_.count - from);
          emitter_->ask_range(archive_, context, batch_, from, count);
          batch_.clear_results(from, count);
          evaluate_range_(batch_, from, count);
          place_range(from, count);
        }
      },
      tbb::simple_partitioner());
}

void MapElitesSearch::evaluate_range(std::size_t first, std::size_t count) {
  if (first == 0 && count == batch_.count) {
    evaluate_(batch_);
    return;
  }
  Batch part;
  const std::size_t g = batch_.genome_size, d = batch_.descriptor_size, e = batch_.extra_size;
  part.resize(count, g, d, e);
  std::copy_n(batch_.genomes.begin() + first * g, count * g, part.genomes.begin());
  evaluate_(part);
  std::copy_n(part.genomes.begin(), count * g, batch_.genomes.begin() + first * g);
  std::copy_n(part.fitness.begin(), count, batch_.fitness.begin() + first);
  std::copy_n(part.descriptors.begin(), count * d, batch_.descriptors.begin() + first * d);
  std::copy_n(part.valid.begin(), count, batch_.valid.begin() + first);
  std::copy_n(part.extras.begin(), count * e, batch_.extras.begin() + first * e);
}

SearchFigures MapElitesSearch::figures() const {
  return search_figures(archive_, counters_, settings_.evaluations, qd_score_, max_fitness_,
                        qd_offset_, archive_.size());
}

void save_space(const DescriptorSpace& space, ArchiveSnapshot& out) {
  out.space_kind = space.kind();
  out.descriptor_bounds = space.bounds();
  out.descriptor_names = space.names();
  out.resolution.clear();
  out.centroids.clear();
  if (const auto* grid = dynamic_cast<const GridSpace*>(&space))
    out.resolution = grid->resolution();
  if (const auto* cvt = dynamic_cast<const CvtSpace*>(&space)) out.centroids = cvt->centroids();
}

std::shared_ptr<const DescriptorSpace> space_from_snapshot(const ArchiveSnapshot& in) {
  if (in.space_kind == "grid")
    return std::make_shared<GridSpace>(in.descriptor_bounds, in.descriptor_names, in.resolution);
  if (in.space_kind == "cvt")
    return std::make_shared<CvtSpace>(in.descriptor_bounds, in.descriptor_names, in.centroids);
  throw std::invalid_argument("space kind '" + in.space_kind + "' is not a grid or a CVT");
}

void save_elites(const EliteArchive& archive, ArchiveSnapshot& out) {
  save_space(archive.space(), out);
  // Whole arrays in one copy each (no zero-filling first): on a large archive this copy is a
  // good part of every checkpoint.
  const auto copy = [](auto from, auto& to) { to.assign(from.begin(), from.end()); };
  copy(archive.all_cells(), out.cell);
  copy(archive.all_fitness(), out.fitness);
  copy(archive.all_births(), out.birth);
  copy(archive.all_genomes(), out.genome);
  copy(archive.all_descriptors(), out.descriptor);
  copy(archive.all_extras(), out.extras);
}

void restore_elites(const ArchiveSnapshot& in, EliteArchive& archive) {
  const std::size_t g = archive.genome_size();
  const std::size_t d = archive.descriptor_size();
  // Elites of a file without extras (format 1) keep NaN: not recorded.
  const std::size_t e = in.extra_size() == archive.extra_size() ? in.extra_size() : 0;
  if (in.extra_size() != 0 && e == 0)
    throw std::invalid_argument("the archive's elites have " + std::to_string(in.extra_size()) +
                                " extra figures but the problem gives " +
                                std::to_string(archive.extra_size()));
  for (std::size_t i = 0; i < in.elite_count(); ++i)
    archive.restore(in.cell[i], {in.genome.data() + i * g, g}, in.fitness[i],
                    {in.descriptor.data() + i * d, d}, in.birth[i], {in.extras.data() + i * e, e});
}

void MapElitesSearch::save(ArchiveSnapshot& out) const {
  save_elites(archive_, out);
  out.genome_bounds = genome_bounds_;
  out.seed = settings_.seed;
  out.random_streams = static_cast<std::int64_t>(settings_.streams);
  out.evaluations = counters_.evaluations;
  out.history = history_;
  out.fitness_floor = qd_offset_;
  ResumeState state;
  state.algorithm = name();
  state.next_batch = next_batch_;
  save_counters(counters_, state);
  state.arrays["max_fitness"] = {max_fitness_};
  if (archive_.has_thresholds() && !archive_.empty())
    state.arrays["thresholds"] = archive_.thresholds();
  emitter_->save(state);
  if (batch_done_ > 0) save_partial_batch(state);
  out.resume = state;
}

void MapElitesSearch::restore(const ArchiveSnapshot& in) {
  if (!in.resume) throw std::invalid_argument("the archive holds no resume state");
  if (in.resume->algorithm != name())
    throw std::invalid_argument("the archive was made by '" + in.resume->algorithm + "', not " +
                                name());
  if (in.genome_size() != archive_.genome_size() ||
      in.descriptor_size() != archive_.descriptor_size())
    throw std::invalid_argument("genome or descriptor size differs from the problem's");
  if (!archive_.empty() || counters_.evaluations != 0)
    throw std::invalid_argument("restore into a search that has already run");
  restore_elites(in, archive_);
  settings_.streams = stream_version(in.random_streams);
  if (archive_.has_thresholds() && !archive_.empty()) {
    const auto t = in.resume->arrays.find("thresholds");
    if (t == in.resume->arrays.end())
      throw std::invalid_argument("the resume state holds no archive thresholds");
    archive_.restore_thresholds(t->second);
  }
  history_ = in.history;
  counters_ = load_counters(*in.resume, in.evaluations);
  next_batch_ = in.resume->next_batch;
  qd_score_ = history_.empty() ? 0.0 : history_.back().qd_score;
  auto it = in.resume->arrays.find("max_fitness");
  max_fitness_ = (it != in.resume->arrays.end() && it->second.size() == 1)
                     ? it->second[0]
                     : -std::numeric_limits<double>::infinity();
  emitter_->load(*in.resume);
  load_partial_batch(*in.resume);
}

// A batch cut by the budget: all its genomes, what the evaluated part gave, and what the archive
// did with it, so that resuming completes it as if it had never been cut.
void MapElitesSearch::save_partial_batch(ResumeState& state) const {
  auto as_doubles = [](const auto& values) {
    return std::vector<double>(values.begin(), values.end());
  };
  state.arrays["partial_done"] = {static_cast<double>(batch_done_)};
  state.arrays["partial_genome"] = batch_.genomes;
  state.arrays["partial_fitness"] = batch_.fitness;
  state.arrays["partial_descriptor"] = batch_.descriptors;
  state.arrays["partial_valid"] = as_doubles(batch_.valid);
  state.arrays["partial_extras"] = batch_.extras;
  std::vector<double> outcome, clamped, cell, replaced;
  for (std::size_t j = 0; j < batch_done_; ++j) {
    outcome.push_back(static_cast<double>(results_[j].outcome));
    clamped.push_back(results_[j].clamped ? 1.0 : 0.0);
    cell.push_back(static_cast<double>(results_[j].cell));
    replaced.push_back(results_[j].replaced_fitness);
  }
  state.arrays["partial_outcome"] = outcome;
  state.arrays["partial_clamped"] = clamped;
  state.arrays["partial_cell"] = cell;
  state.arrays["partial_replaced"] = replaced;
}

void MapElitesSearch::load_partial_batch(const ResumeState& state) {
  batch_done_ = 0;
  auto find = [&](const char* key) -> const std::vector<double>* {
    auto it = state.arrays.find(key);
    return it == state.arrays.end() ? nullptr : &it->second;
  };
  const auto* done = find("partial_done");
  if (!done) return;
  const std::size_t g = archive_.genome_size(), d = archive_.descriptor_size();
  const std::size_t n = settings_.batch;
  const auto* genome = find("partial_genome");
  const auto* fitness = find("partial_fitness");
  const auto* descriptor = find("partial_descriptor");
  const auto* valid = find("partial_valid");
  const auto* extras = find("partial_extras");
  const auto* outcome = find("partial_outcome");
  const auto* clamped = find("partial_clamped");
  const auto* cell = find("partial_cell");
  const auto* replaced = find("partial_replaced");
  if (done->size() != 1 || !(done->front() >= 1.0 && done->front() < static_cast<double>(n)))
    throw std::invalid_argument("the cut batch's position does not fit the batch size");
  const auto k = static_cast<std::size_t>(done->front());
  const bool sizes_fit = genome && genome->size() == n * g && fitness && fitness->size() == n &&
                         descriptor && descriptor->size() == n * d && valid && valid->size() == n &&
                         extras && extras->size() == n * extra_size_ && outcome &&
                         outcome->size() == k && clamped && clamped->size() == k && cell &&
                         cell->size() == k && replaced && replaced->size() == k;
  if (!sizes_fit) throw std::invalid_argument("the cut batch's arrays do not fit the batch size");
  batch_.resize(n, g, d, extra_size_);
  batch_.genomes = *genome;
  batch_.fitness = *fitness;
  batch_.descriptors = *descriptor;
  for (std::size_t j = 0; j < n; ++j) batch_.valid[j] = (*valid)[j] != 0.0 ? 1 : 0;
  batch_.extras = *extras;
  results_.assign(n, InsertResult{});
  for (std::size_t j = 0; j < k; ++j) {
    const double o = (*outcome)[j];
    if (!(o >= 0.0 && o <= static_cast<double>(Insertion::invalid)))
      throw std::invalid_argument("the cut batch holds an unknown insertion outcome");
    results_[j].outcome = static_cast<Insertion>(static_cast<int>(o));
    results_[j].clamped = (*clamped)[j] != 0.0;
    results_[j].cell = static_cast<std::int64_t>((*cell)[j]);
    results_[j].replaced_fitness = (*replaced)[j];
  }
  batch_done_ = k;
}

}  // namespace tessera
