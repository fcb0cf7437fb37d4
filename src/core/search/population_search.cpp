#include "core/search/population_search.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/base/rng.hpp"
#include "core/search/map_elites.hpp"
#include "core/search/variation.hpp"

namespace tessera {
namespace {

constexpr double kMinusInf = -std::numeric_limits<double>::infinity();

bool usable(const Batch& batch, std::size_t j) {
  if (!batch.valid[j] || !std::isfinite(batch.fitness[j])) return false;
  for (double v : batch.descriptor(j))
    if (!std::isfinite(v)) return false;
  for (double v : batch.genome(j))
    if (!std::isfinite(v)) return false;
  return true;
}

const std::vector<double>& array(const ResumeState& state, const std::string& name,
                                 std::size_t expected) {
  const auto it = state.arrays.find(name);
  if (it == state.arrays.end())
    throw std::invalid_argument("the resume state lacks the array '" + name + "'");
  if (it->second.size() != expected)
    throw std::invalid_argument("the resume array '" + name + "' has " +
                                std::to_string(it->second.size()) + " values, expected " +
                                std::to_string(expected));
  return it->second;
}

std::size_t count_of(const ResumeState& state, const std::string& name, std::size_t per_row) {
  const auto it = state.arrays.find(name);
  if (it == state.arrays.end())
    throw std::invalid_argument("the resume state lacks the array '" + name + "'");
  if (per_row == 0 || it->second.size() % per_row != 0)
    throw std::invalid_argument("the resume array '" + name + "' does not hold whole rows");
  return it->second.size() / per_row;
}

}  // namespace

const char* to_string(PopulationAlgorithm algorithm) {
  switch (algorithm) {
    case PopulationAlgorithm::novelty:
      return "novelty";
    case PopulationAlgorithm::novelty_lc:
      return "novelty-lc";
    case PopulationAlgorithm::objective:
      return "objective";
    case PopulationAlgorithm::random:
      return "random";
  }
  return "?";
}

bool is_population_algorithm(const std::string& name) {
  return name == "novelty" || name == "novelty-lc" || name == "objective" || name == "random";
}

PopulationAlgorithm parse_population_algorithm(const std::string& name) {
  for (auto a : {PopulationAlgorithm::novelty, PopulationAlgorithm::novelty_lc,
                 PopulationAlgorithm::objective, PopulationAlgorithm::random})
    if (name == to_string(a)) return a;
  throw std::invalid_argument("unknown population algorithm '" + name + "'");
}

void PopulationSearch::Group::clear() {
  for (auto* v : {&genome, &descriptor, &fitness, &valid, &novelty, &competition, &rank, &crowding})
    v->clear();
}

void PopulationSearch::Group::append(const Group& from, std::size_t i, std::size_t g,
                                     std::size_t d) {
  genome.insert(genome.end(), from.genome.begin() + i * g, from.genome.begin() + (i + 1) * g);
  descriptor.insert(descriptor.end(), from.descriptor.begin() + i * d,
                    from.descriptor.begin() + (i + 1) * d);
  fitness.push_back(from.fitness[i]);
  valid.push_back(from.valid[i]);
  novelty.push_back(from.novelty[i]);
  competition.push_back(from.competition[i]);
  rank.push_back(from.rank[i]);
  crowding.push_back(from.crowding[i]);
}

PopulationSearch::PopulationSearch(PopulationAlgorithm algorithm, SearchSettings settings,
                                   PopulationSettings population, VariationSettings variation,
                                   std::shared_ptr<const DescriptorSpace> reference,
                                   Bounds genome_bounds, double qd_offset, EvaluateFn evaluate,
                                   std::size_t extra_size)
    : algorithm_(algorithm),
      settings_(settings),
      population_settings_(population),
      variation_(variation),
      genome_bounds_(std::move(genome_bounds)),
      qd_offset_(qd_offset),
      evaluate_(std::move(evaluate)),
      extra_size_(extra_size),
      archive_(reference->bounds(), genome_bounds_.size(), population.novelty),
      reference_(std::move(reference), genome_bounds_.size(), extra_size),
      max_fitness_(kMinusInf) {
  if (settings_.batch == 0) throw std::invalid_argument("batch size must be at least 1");
  if (population_settings_.tournament == 0)
    throw std::invalid_argument("tournament size must be at least 1");
  check_bounds(genome_bounds_, "genome bounds");
}

// Strictly better parent, by the algorithm's selection key.
bool PopulationSearch::better(std::size_t a, std::size_t b) const {
  const Group& p = population_;
  switch (algorithm_) {
    case PopulationAlgorithm::novelty:
      return p.novelty[a] > p.novelty[b];
    case PopulationAlgorithm::objective:
      return p.fitness[a] > p.fitness[b];
    case PopulationAlgorithm::novelty_lc:
      if (p.rank[a] != p.rank[b]) return p.rank[a] < p.rank[b];
      return p.crowding[a] > p.crowding[b];
    case PopulationAlgorithm::random:
      return false;
  }
  return false;
}

// The best of `tournament` members drawn with replacement; ties go to the lower index.
std::size_t PopulationSearch::tournament(Rng& rng) const {
  std::size_t winner = rng.below(population_.size());
  for (std::size_t t = 1; t < population_settings_.tournament; ++t) {
    const std::size_t c = rng.below(population_.size());
    if (better(c, winner) || (!better(winner, c) && c < winner)) winner = c;
  }
  return winner;
}

void PopulationSearch::make_children(std::size_t count) {
  const std::size_t g = genome_bounds_.size();
  const bool random_only = algorithm_ == PopulationAlgorithm::random || population_.size() == 0;
  tbb::parallel_for(
      tbb::blocked_range<std::size_t>(0, count, 64),
      [&](const tbb::blocked_range<std::size_t>& range) {
        for (std::size_t j = range.begin(); j != range.end(); ++j) {
          auto child = batch_.genome(j);
          const bool initial = counters_.evaluations + j < settings_.effective_initial();
          if (random_only || initial) {
            Rng rng(settings_.seed, next_batch_, j,
                    static_cast<std::uint64_t>(StreamPurpose::initial));
            // Start genomes seed the initial phase; resampled ones feed every random draw.
            const bool from_start = initial || (settings_.start && settings_.start->resample);
            initial_genome(from_start ? settings_.start.get() : nullptr, genome_bounds_,
                           counters_.evaluations + j, rng, child);
            continue;
          }
          Rng pick(settings_.seed, next_batch_, j,
                   static_cast<std::uint64_t>(StreamPurpose::selection));
          const std::size_t a = tournament(pick);
          const std::size_t b = tournament(pick);
          Rng rng(settings_.seed, next_batch_, j,
                  static_cast<std::uint64_t>(StreamPurpose::variation), settings_.streams);
          const std::span<const double> x{population_.genome.data() + a * g, g};
          if (variation_.op == VariationOperator::gaussian) {
            gaussian_mutation(x, genome_bounds_, variation_.sigma, rng, child);
          } else {
            const std::span<const double> y{population_.genome.data() + b * g, g};
            iso_line_dd(x, y, genome_bounds_, variation_.sigma_iso, variation_.sigma_line, rng,
                        child);
          }
        }
      });
}

// Novelty and local competition of every valid member of the pool, against the novelty archive
// and the whole pool (invalid members get -1 on both, below any valid score). For novelty-lc the
// pool is also ranked by NSGA-II.
void PopulationSearch::score(Group& pool) {
  const auto start = std::chrono::steady_clock::now();
  const std::size_t d = archive_.descriptor_size();
  const std::size_t n = pool.size();
  // The valid members, scaled, scored against the novelty archive (kept in a growing index)
  // and one another.
  std::vector<double> points, fitness;
  std::vector<std::size_t> queries, member;
  for (std::size_t i = 0; i < n; ++i) {
    if (pool.valid[i] == 0.0) continue;
    queries.push_back(fitness.size());
    member.push_back(i);
    points.resize(points.size() + d);
    archive_.scale({pool.descriptor.data() + i * d, d}, {points.data() + points.size() - d, d});
    fitness.push_back(pool.fitness[i]);
  }
  const NeighbourScores s = archive_.score_pool(points, fitness, queries);
  pool.novelty.assign(n, -1.0);
  pool.competition.assign(n, -1.0);
  for (std::size_t j = 0; j < member.size(); ++j) {
    pool.novelty[member[j]] = s.novelty[j];
    pool.competition[member[j]] = s.competition[j];
  }
  pool.rank.assign(n, 0.0);
  pool.crowding.assign(n, 0.0);
  if (algorithm_ == PopulationAlgorithm::novelty_lc) {
    std::vector<double> objectives(2 * n);
    for (std::size_t i = 0; i < n; ++i) {
      objectives[2 * i] = pool.novelty[i];
      objectives[2 * i + 1] = pool.competition[i];
    }
    const Nsga2Ranking r = nsga2_rank(objectives, 2);
    for (std::size_t i = 0; i < n; ++i) {
      pool.rank[i] = static_cast<double>(r.rank[i]);
      pool.crowding[i] = r.crowding[i];
    }
  }
  scoring_seconds_ +=
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

void PopulationSearch::step() {
  if (finished()) return;
  const std::uint64_t remaining = settings_.evaluations - counters_.evaluations;
  const std::size_t count =
      static_cast<std::size_t>(std::min<std::uint64_t>(settings_.batch, remaining));
  const std::size_t g = genome_bounds_.size();
  const std::size_t d = archive_.descriptor_size();
  batch_.resize(count, g, d, extra_size_);
  make_children(count);
  evaluate_(batch_);

  // The children as a group; novelty-lc scores them together with their parents.
  Group pool;
  if (algorithm_ == PopulationAlgorithm::novelty_lc) pool = population_;
  const std::size_t first_child = pool.size();
  for (std::size_t j = 0; j < count; ++j) {
    const bool ok = usable(batch_, j);
    pool.genome.insert(pool.genome.end(), batch_.genome(j).begin(), batch_.genome(j).end());
    pool.descriptor.insert(pool.descriptor.end(), batch_.descriptor(j).begin(),
                           batch_.descriptor(j).end());
    pool.fitness.push_back(ok ? batch_.fitness[j] : kMinusInf);
    pool.valid.push_back(ok ? 1.0 : 0.0);
  }
  score(pool);

  // Serial, in candidate order: the reference archive, the counters and the novelty archive.
  std::uint64_t entries = 0;
  last_novelty_.assign(pool.novelty.begin() + first_child, pool.novelty.end());
  last_competition_.assign(pool.competition.begin() + first_child, pool.competition.end());
  for (std::size_t j = 0; j < count; ++j) {
    const std::uint64_t birth = counters_.evaluations + j + 1;
    const InsertResult r = offer_candidate(reference_, batch_, j, birth, qd_offset_, counters_,
                                           qd_score_, max_fitness_);
    if (r.outcome == Insertion::invalid) continue;
    if (pool.valid[first_child + j] != 0.0 && last_novelty_[j] > archive_.threshold()) {
      archive_.add(batch_.genome(j), batch_.descriptor(j), batch_.fitness[j], birth);
      ++entries;
    }
  }
  archive_.end_batch(count, entries);

  // Survivors become the population the next batch's parents come from.
  if (algorithm_ == PopulationAlgorithm::novelty_lc) {
    Nsga2Ranking r;
    for (std::size_t i = 0; i < pool.size(); ++i) {
      r.rank.push_back(static_cast<std::size_t>(pool.rank[i]));
      r.crowding.push_back(pool.crowding[i]);
    }
    Group next;
    for (std::size_t i : nsga2_survivors(r, settings_.batch)) next.append(pool, i, g, d);
    population_ = std::move(next);
  } else {
    population_ = std::move(pool);
  }

  counters_.evaluations += count;
  ++next_batch_;
  history_.push_back(
      history_row(reference_, counters_.evaluations, qd_score_, max_fitness_, qd_offset_));
}

SearchFigures PopulationSearch::figures() const {
  return search_figures(reference_, counters_, settings_.evaluations, qd_score_, max_fitness_,
                        qd_offset_, archive_.size());
}

void PopulationSearch::save(ArchiveSnapshot& out) const {
  // The reference map is what every command reads as the run's elites: the best behaviour found
  // per cell, exactly as MAP-Elites keeps it.
  save_elites(reference_, out);
  const std::size_t g = genome_bounds_.size();
  const std::size_t d = archive_.descriptor_size();
  out.genome_bounds = genome_bounds_;
  out.seed = settings_.seed;
  out.random_streams = static_cast<std::int64_t>(settings_.streams);
  out.evaluations = counters_.evaluations;
  BehaviourRows behaviours;
  const std::size_t n = archive_.size();
  behaviours.fitness.resize(n);
  behaviours.birth.resize(n);
  behaviours.genome.resize(n * g);
  behaviours.descriptor.resize(n * d);
  for (std::size_t i = 0; i < n; ++i) {
    behaviours.fitness[i] = archive_.fitness(i);
    behaviours.birth[i] = archive_.birth(i);
    std::copy_n(archive_.genome(i).data(), g, behaviours.genome.begin() + i * g);
    std::copy_n(archive_.descriptor(i).data(), d, behaviours.descriptor.begin() + i * d);
  }
  out.novelty_archive = std::move(behaviours);
  out.history = history_;
  out.fitness_floor = qd_offset_;

  ResumeState state;
  state.algorithm = name();
  state.next_batch = next_batch_;
  save_counters(counters_, state);
  auto& a = state.arrays;
  a["max_fitness"] = {max_fitness_};
  a["novelty_threshold"] = {archive_.threshold(),
                            static_cast<double>(archive_.window_evaluations()),
                            static_cast<double>(archive_.window_entries())};
  a["population_genome"] = population_.genome;
  a["population_descriptor"] = population_.descriptor;
  a["population_fitness"] = population_.fitness;
  a["population_valid"] = population_.valid;
  a["population_novelty"] = population_.novelty;
  a["population_competition"] = population_.competition;
  a["population_rank"] = population_.rank;
  a["population_crowding"] = population_.crowding;
  out.resume = state;
}

// Format 1 kept the novelty archive as unstructured /elites and the reference map in
// /resume/arrays/reference_*.
void PopulationSearch::restore_format1(const ArchiveSnapshot& in) {
  const ResumeState& state = *in.resume;
  const std::size_t g = genome_bounds_.size();
  const std::size_t d = archive_.descriptor_size();
  if (array(state, "reference_cells", 1)[0] != static_cast<double>(reference_.space().cell_count()))
    throw std::invalid_argument("the reference space differs from the one the run used");
  for (std::size_t i = 0; i < in.elite_count(); ++i)
    archive_.add({in.genome.data() + i * g, g}, {in.descriptor.data() + i * d, d}, in.fitness[i],
                 in.birth[i]);
  const std::size_t m = count_of(state, "reference_cell", 1);
  const auto& cells = array(state, "reference_cell", m);
  const auto& fitness = array(state, "reference_fitness", m);
  const auto& birth = array(state, "reference_birth", m);
  const auto& genome = array(state, "reference_genome", m * g);
  const auto& descriptor = array(state, "reference_descriptor", m * d);
  for (std::size_t i = 0; i < m; ++i)
    reference_.restore(static_cast<std::int64_t>(cells[i]), {genome.data() + i * g, g}, fitness[i],
                       {descriptor.data() + i * d, d}, static_cast<std::uint64_t>(birth[i]));
}

void PopulationSearch::restore(const ArchiveSnapshot& in) {
  if (!in.resume) throw std::invalid_argument("the archive holds no resume state");
  const ResumeState& state = *in.resume;
  if (state.algorithm != name())
    throw std::invalid_argument("the archive was made by '" + state.algorithm + "', not " + name());
  const std::size_t g = genome_bounds_.size();
  const std::size_t d = archive_.descriptor_size();
  if (in.genome_size() != g || in.descriptor_size() != d)
    throw std::invalid_argument("genome or descriptor size differs from the problem's");
  if (archive_.size() != 0 || counters_.evaluations != 0)
    throw std::invalid_argument("restore into a search that has already run");
  settings_.streams = stream_version(in.random_streams);

  if (in.space_kind == "unstructured") {
    restore_format1(in);
  } else {
    if (in.cell_count() != reference_.space().cell_count())
      throw std::invalid_argument("the reference space differs from the one the run used");
    if (!in.novelty_archive) throw std::invalid_argument("the archive holds no novelty archive");
    restore_elites(in, reference_);
    const BehaviourRows& b = *in.novelty_archive;
    for (std::size_t i = 0; i < b.size(); ++i)
      archive_.add({b.genome.data() + i * g, g}, {b.descriptor.data() + i * d, d}, b.fitness[i],
                   b.birth[i]);
  }
  const auto& t = array(state, "novelty_threshold", 3);
  archive_.set_state(t[0], static_cast<std::uint64_t>(t[1]), static_cast<std::uint64_t>(t[2]));

  const std::size_t p = count_of(state, "population_fitness", 1);
  population_.genome = array(state, "population_genome", p * g);
  population_.descriptor = array(state, "population_descriptor", p * d);
  population_.fitness = array(state, "population_fitness", p);
  population_.valid = array(state, "population_valid", p);
  population_.novelty = array(state, "population_novelty", p);
  population_.competition = array(state, "population_competition", p);
  population_.rank = array(state, "population_rank", p);
  population_.crowding = array(state, "population_crowding", p);

  history_ = in.history;
  counters_ = load_counters(state, in.evaluations);
  next_batch_ = state.next_batch;
  qd_score_ = history_.empty() ? 0.0 : history_.back().qd_score;
  max_fitness_ = array(state, "max_fitness", 1)[0];
}

}  // namespace tessera
