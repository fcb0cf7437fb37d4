#include "core/search/cma_emitter.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <stdexcept>

namespace tessera {
namespace {

constexpr int kRedraws = 16;

bool inside_unit_box(std::span<const double> x) {
  for (double v : x)
    if (!(v >= 0.0 && v <= 1.0)) return false;
  return true;
}

}  // namespace

CmaRanking parse_cma_ranking(const std::string& name) {
  if (name == "improvement") return CmaRanking::improvement;
  if (name == "random-direction") return CmaRanking::random_direction;
  if (name == "optimising") return CmaRanking::optimising;
  throw std::invalid_argument("unknown ranking '" + name +
                              "' (choose improvement, random-direction or optimising)");
}

const char* to_string(CmaRanking ranking) {
  switch (ranking) {
    case CmaRanking::improvement:
      return "improvement";
    case CmaRanking::random_direction:
      return "random-direction";
    case CmaRanking::optimising:
      return "optimising";
    case CmaRanking::threshold:
      return "threshold";
  }
  return "?";
}

CmaEmitter::CmaEmitter(CmaEmitterSettings settings, std::size_t genome_size, std::string state_key)
    : settings_(settings),
      state_key_(std::move(state_key)),
      es_(std::vector<double>(genome_size, 0.5), settings.sigma,
          settings.lambda == 0 ? cma_default_lambda(genome_size) : settings.lambda) {
  if (settings_.ranking == CmaRanking::threshold &&
      !(settings_.learning_rate >= 0.0 && settings_.learning_rate <= 1.0))
    throw std::invalid_argument("archive learning rate must lie in [0, 1]");
}

std::optional<double> CmaEmitter::archive_learning_rate() const {
  if (settings_.ranking != CmaRanking::threshold) return std::nullopt;
  return settings_.learning_rate;
}

void CmaEmitter::start(const EliteArchive& archive, const EmitContext& context) {
  // (Re)start from a uniformly chosen elite (CMA-ME's restart rule), or the centre of the box
  // before any elite exists.
  Rng rng(context.seed, context.batch_index, 0,
          static_cast<std::uint64_t>(StreamPurpose::selection), context.streams);
  const Bounds& bounds = *context.genome_bounds;
  std::vector<double> mean(bounds.size(), 0.5);
  if (!archive.empty()) {
    const auto elite = archive.genome(rng.below(archive.size()));
    for (std::size_t i = 0; i < mean.size(); ++i)
      mean[i] = std::clamp((elite[i] - bounds.lower[i]) / bounds.width(i), 0.0, 1.0);
  }
  es_.reset(mean);
  if (settings_.ranking == CmaRanking::random_direction) {
    // A uniformly random unit direction in the descriptor space scaled to [0, 1] per dimension.
    const Bounds& d = archive.space().bounds();
    direction_.assign(d.size(), 0.0);
    double norm = 0.0;
    while (norm == 0.0) {
      norm = 0.0;
      for (auto& v : direction_) {
        v = rng.normal();
        norm += v * v;
      }
    }
    norm = std::sqrt(norm);
    for (std::size_t i = 0; i < d.size(); ++i) direction_[i] /= norm * d.width(i);
  }
  stale_ = 0;
  started_ = true;
}

void CmaEmitter::ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) {
  if (!started_) start(archive, context);
  const Bounds& bounds = *context.genome_bounds;
  const std::size_t n = es_.dimensions();
  samples_.resize(batch.count * n);
  // Each candidate draws from its own stream, so the batch does not depend on threads.
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, batch.count, 8),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      for (std::size_t j = range.begin(); j != range.end(); ++j) {
                        Rng rng(context.seed, context.batch_index, j,
                                static_cast<std::uint64_t>(StreamPurpose::variation),
                                context.streams);
                        std::span<double> x(samples_.data() + j * n, n);
                        for (int draw = 0; draw < kRedraws; ++draw) {
                          es_.sample(rng, x);
                          if (inside_unit_box(x)) break;
                        }
                        for (auto& v : x) v = std::clamp(v, 0.0, 1.0);
                        auto genome = batch.genome(j);
                        for (std::size_t i = 0; i < n; ++i)
                          genome[i] = std::clamp(bounds.lower[i] + x[i] * bounds.width(i),
                                                 bounds.lower[i], bounds.upper[i]);
                      }
                    });
}

void CmaEmitter::tell(const Batch& batch, std::span<const InsertResult> results) {
  const std::size_t lambda = es_.lambda();
  // A budget that ends mid-generation leaves a short batch: no update from it.
  if (batch.count < lambda || !started_) return;
  const std::size_t n = es_.dimensions();
  // A batch cut by the budget and completed after a resume: the steps sampled when it was asked
  // are gone (they are not saved), so it cannot teach the distribution.
  if (samples_.size() < lambda * n) return;
  const double lowest = -std::numeric_limits<double>::infinity();
  std::vector<int> group(lambda, 0);
  std::vector<double> value(lambda, lowest);
  std::size_t accepted = 0;
  bool gain = false;
  for (std::size_t j = 0; j < lambda; ++j) {
    const InsertResult& r = results[j];
    const bool valid = r.outcome != Insertion::invalid;
    const bool added = r.outcome == Insertion::new_cell || r.outcome == Insertion::improved;
    const double f = batch.fitness[j];
    switch (settings_.ranking) {
      case CmaRanking::improvement:
        group[j] = r.outcome == Insertion::new_cell ? 2 : r.outcome == Insertion::improved ? 1 : 0;
        if (r.outcome == Insertion::new_cell) value[j] = f;
        if (r.outcome == Insertion::improved) value[j] = f - r.replaced_fitness;
        break;
      case CmaRanking::random_direction: {
        group[j] = added ? 1 : 0;
        double projection = 0.0;
        const auto d = batch.descriptor(j);
        for (std::size_t i = 0; i < direction_.size(); ++i) projection += d[i] * direction_[i];
        if (valid) value[j] = projection;
        break;
      }
      case CmaRanking::optimising:
        if (valid) value[j] = f;
        break;
      case CmaRanking::threshold:
        if (valid) value[j] = f - r.threshold;
        break;
    }
    if (!std::isfinite(value[j])) value[j] = lowest;  // NaN would break the ordering
    if (added) ++accepted;
    gain = gain || (settings_.ranking == CmaRanking::threshold ? r.above_threshold : added);
  }
  order_.resize(lambda);
  std::iota(order_.begin(), order_.end(), std::size_t{0});
  std::stable_sort(order_.begin(), order_.end(), [&](std::size_t a, std::size_t b) {
    if (group[a] != group[b]) return group[a] > group[b];
    return value[a] > value[b];
  });
  // Improvement and random-direction rankings recombine only the accepted candidates (CMA-ME's
  // selection); optimising and threshold rankings take the tutorial's default weights.
  const bool filtered = settings_.ranking == CmaRanking::improvement ||
                        settings_.ranking == CmaRanking::random_direction;
  if (!filtered || accepted > 0) {
    std::vector<std::span<const double>> ranked;
    ranked.reserve(lambda);
    for (auto j : order_) ranked.emplace_back(samples_.data() + j * n, n);
    es_.tell(ranked, filtered ? cma_parent_constants(n, lambda, accepted)
                              : cma_default_constants(n, lambda));
  }
  stale_ = gain ? 0 : stale_ + 1;
  if ((settings_.patience > 0 && stale_ >= settings_.patience) || es_.stalled()) {
    started_ = false;  // the next ask restarts from an elite
    ++restarts_;
  }
}

void CmaEmitter::save(ResumeState& state) const {
  std::vector<double> out = {started_ ? 1.0 : 0.0, static_cast<double>(restarts_),
                             static_cast<double>(stale_), static_cast<double>(direction_.size())};
  out.insert(out.end(), direction_.begin(), direction_.end());
  es_.save(out);
  state.arrays[state_key_] = std::move(out);
}

void CmaEmitter::load(const ResumeState& state) {
  const auto it = state.arrays.find(state_key_);
  if (it == state.arrays.end())
    throw std::invalid_argument("the resume state holds no '" + state_key_ + "' emitter state");
  const std::vector<double>& in = it->second;
  if (in.size() < 4 || in.size() < 4 + static_cast<std::size_t>(in[3]))
    throw std::invalid_argument("emitter state '" + state_key_ + "' is too short");
  started_ = in[0] != 0.0;
  restarts_ = static_cast<std::uint64_t>(in[1]);
  stale_ = static_cast<std::uint64_t>(in[2]);
  direction_.assign(in.begin() + 4, in.begin() + 4 + static_cast<std::ptrdiff_t>(in[3]));
  std::size_t pos = 4 + direction_.size();
  es_.load(in, pos);
  if (pos != in.size())
    throw std::invalid_argument("emitter state '" + state_key_ + "' has the wrong size");
}

}  // namespace tessera
