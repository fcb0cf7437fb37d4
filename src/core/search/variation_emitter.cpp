#include "core/search/variation_emitter.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

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
  const Bounds& bounds = *context.genome_bounds;
  // Candidates are independent given the archive at the start of the batch, so they are made
  // in parallel; each draws from its own stream, keeping the batch thread-count independent.
  tbb::parallel_for(
      tbb::blocked_range<std::size_t>(0, batch.count, 64),
      [&](const tbb::blocked_range<std::size_t>& range) {
        for (std::size_t j = range.begin(); j != range.end(); ++j) {
          Rng rng(context.seed, context.batch_index, j,
                  static_cast<std::uint64_t>(StreamPurpose::variation), context.streams);
          auto child = batch.genome(j);
          if (archive.empty() || context.first_candidate + j < context.initial) {
            initial_genome(context.start, bounds, context.first_candidate + j, rng, child);
            continue;
          }
          const auto x = archive.genome(rng.below(archive.size()));
          if (settings_.op == VariationOperator::gaussian) {
            gaussian_mutation(x, bounds, settings_.sigma, rng, child);
          } else {
            const auto y = archive.genome(rng.below(archive.size()));
            iso_line_dd(x, y, bounds, settings_.sigma_iso, settings_.sigma_line, rng, child);
          }
        }
      });
}

}  // namespace tessera
