#include "core/search/variation_emitter.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <optional>
#include <stdexcept>

#include "core/search/search.hpp"
#include "core/search/variation.hpp"

namespace tessera {

VariationOperator parse_variation_operator(const std::string& name) {
  if (name == "iso-line-dd") return VariationOperator::iso_line_dd;
  if (name == "gaussian") return VariationOperator::gaussian;
  throw std::invalid_argument("unknown variation operator '" + name +
                              "' (choose iso-line-dd or gaussian)");
}

const char* to_string(VariationOperator op) {
  return op == VariationOperator::iso_line_dd ? "iso-line-dd" : "gaussian";
}

void VariationEmitter::ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) {
  // Candidates are independent given the archive at the start of the batch, so they are made
  // in parallel; each draws from its own stream, keeping the batch thread-count independent.
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, batch.count, 64),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      ask_range(archive, context, batch, range.begin(), range.size());
                    });
}

void VariationEmitter::ask_range(const EliteArchive& archive, const EmitContext& context,
                                 Batch& batch, std::size_t first, std::size_t count) {
  const Bounds& bounds = *context.genome_bounds;
  const bool two_parents = settings_.op == VariationOperator::iso_line_dd;
  // Parents are random rows of the archive, so reading them misses the cache. Every stream
  // draws its parents first; doing that for a few candidates at once and asking for their rows
  // overlaps the misses, and leaves each stream where the operator goes on drawing.
  constexpr std::size_t kAhead = 8;
  const RngKeyPrefix batch_key = Rng::prefix(context.seed, context.batch_index);
  std::optional<Rng> rng[kAhead];
  std::size_t x[kAhead], y[kAhead];
  bool random[kAhead];
  for (std::size_t block = first; block < first + count; block += kAhead) {
    const std::size_t n = std::min(kAhead, first + count - block);
    for (std::size_t k = 0; k < n; ++k) {
      const std::size_t j = block + k;
      rng[k].emplace(batch_key, j, static_cast<std::uint64_t>(StreamPurpose::variation),
                     context.streams);
      random[k] = archive.empty() || context.first_candidate + j < context.initial;
      if (random[k]) continue;
      x[k] = rng[k]->below(archive.size());
      archive.prefetch_genome(x[k]);
      if (!two_parents) continue;
      y[k] = rng[k]->below(archive.size());
      archive.prefetch_genome(y[k]);
    }
    for (std::size_t k = 0; k < n; ++k) {
      const std::size_t j = block + k;
      auto child = batch.genome(j);
      if (random[k])
        initial_genome(context.start, bounds, context.first_candidate + j, *rng[k], child);
      else if (two_parents)
        iso_line_dd(archive.genome(x[k]), archive.genome(y[k]), bounds, settings_.sigma_iso,
                    settings_.sigma_line, *rng[k], child);
      else
        gaussian_mutation(archive.genome(x[k]), bounds, settings_.sigma, *rng[k], child);
    }
  }
}

}  // namespace tessera
