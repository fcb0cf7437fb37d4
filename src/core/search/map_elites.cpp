#include "core/search/map_elites.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/archive/cvt.hpp"

namespace tessera {

MapElitesSearch::MapElitesSearch(SearchSettings settings,
                                 std::shared_ptr<const DescriptorSpace> space, Bounds genome_bounds,
                                 double qd_offset, std::unique_ptr<Emitter> emitter,
                                 EvaluateFn evaluate, std::size_t extra_size)
    : settings_(settings),
      archive_(std::move(space), genome_bounds.size()),
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
  const std::size_t count =
      static_cast<std::size_t>(std::min<std::uint64_t>(settings_.batch, remaining));
  batch_.resize(count, archive_.genome_size(), archive_.descriptor_size(), extra_size_);

  EmitContext context;
  context.seed = settings_.seed;
  context.batch_index = next_batch_;
  context.first_candidate = counters_.evaluations;
  context.initial = settings_.effective_initial();
  context.genome_bounds = &genome_bounds_;
  emitter_->ask(archive_, context, batch_);

  evaluate_(batch_);

  // Insertion is serial and in candidate order: the archive's evolution is fixed by the seed.
  results_.resize(count);
  for (std::size_t j = 0; j < count; ++j)
    results_[j] = offer_candidate(archive_, batch_, j, counters_.evaluations + j + 1, qd_offset_,
                                  counters_, qd_score_, max_fitness_);
  emitter_->tell(batch_, results_);

  counters_.evaluations += count;
  ++next_batch_;
  history_.push_back(
      history_row(archive_, counters_.evaluations, qd_score_, max_fitness_, qd_offset_));
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

void MapElitesSearch::save(ArchiveSnapshot& out) const {
  save_space(archive_.space(), out);
  out.genome_bounds = genome_bounds_;
  out.seed = settings_.seed;
  out.evaluations = counters_.evaluations;
  const std::size_t n = archive_.size();
  out.cell.resize(n);
  out.fitness.resize(n);
  out.birth.resize(n);
  out.genome.resize(n * archive_.genome_size());
  out.descriptor.resize(n * archive_.descriptor_size());
  for (std::size_t i = 0; i < n; ++i) {
    out.cell[i] = archive_.cell(i);
    out.fitness[i] = archive_.fitness(i);
    out.birth[i] = archive_.birth(i);
    std::copy_n(archive_.genome(i).data(), archive_.genome_size(),
                out.genome.begin() + i * archive_.genome_size());
    std::copy_n(archive_.descriptor(i).data(), archive_.descriptor_size(),
                out.descriptor.begin() + i * archive_.descriptor_size());
  }
  out.history = history_;
  out.qd_offset = qd_offset_;
  ResumeState state;
  state.algorithm = name();
  state.next_batch = next_batch_;
  save_counters(counters_, state);
  state.arrays["max_fitness"] = {max_fitness_};
  if (archive_.has_thresholds() && !archive_.empty())
    state.arrays["thresholds"] = archive_.thresholds();
  emitter_->save(state);
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
  const std::size_t g = archive_.genome_size();
  const std::size_t d = archive_.descriptor_size();
  for (std::size_t i = 0; i < in.elite_count(); ++i)
    archive_.restore(in.cell[i], {in.genome.data() + i * g, g}, in.fitness[i],
                     {in.descriptor.data() + i * d, d}, in.birth[i]);
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
}

}  // namespace tessera
