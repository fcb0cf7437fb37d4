#include "core/search/emitter_mixture.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <stdexcept>

#include "core/search/variation.hpp"

namespace tessera {
namespace {

std::size_t entry_size(const EmitterSpec& spec, std::size_t genome_size) {
  if (spec.batch != 0) return spec.batch;
  if (spec.kind == "variation") throw std::invalid_argument("a variation emitter needs a batch");
  return cma_default_lambda(genome_size);
}

}  // namespace

MixtureEmitter::MixtureEmitter(std::vector<std::unique_ptr<Emitter>> emitters,
                               std::vector<std::size_t> sizes)
    : emitters_(std::move(emitters)), sizes_(std::move(sizes)), parts_(emitters_.size()) {
  if (emitters_.empty() || emitters_.size() != sizes_.size())
    throw std::invalid_argument("an emitter mixture needs one size per emitter");
}

std::size_t MixtureEmitter::batch_size() const {
  std::size_t total = 0;
  for (auto s : sizes_) total += s;
  return total;
}

std::optional<double> MixtureEmitter::archive_learning_rate() const {
  for (const auto& e : emitters_)
    if (auto rate = e->archive_learning_rate()) return rate;
  return std::nullopt;
}

void MixtureEmitter::ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) {
  random_batch_ = archive.empty() || context.first_candidate < context.initial;
  if (random_batch_) {
    const Bounds& bounds = *context.genome_bounds;
    tbb::parallel_for(tbb::blocked_range<std::size_t>(0, batch.count, 64),
                      [&](const tbb::blocked_range<std::size_t>& range) {
                        for (std::size_t j = range.begin(); j != range.end(); ++j) {
                          Rng rng(context.seed, context.batch_index, j,
                                  static_cast<std::uint64_t>(StreamPurpose::initial));
                          random_genome(bounds, rng, batch.genome(j));
                        }
                      });
    return;
  }
  const std::size_t k_count = emitters_.size();
  std::size_t offset = 0;
  for (std::size_t k = 0; k < k_count; ++k) {
    const std::size_t size = std::min(sizes_[k], batch.count - offset);
    Batch& part = parts_[k];
    part.resize(size, batch.genome_size, batch.descriptor_size, batch.extra_size);
    if (size == 0) continue;
    EmitContext sub = context;
    sub.batch_index = context.batch_index * k_count + k;  // a stream key of its own
    sub.first_candidate = context.first_candidate + offset;
    sub.initial = 0;
    emitters_[k]->ask(archive, sub, part);
    std::copy(part.genomes.begin(), part.genomes.end(),
              batch.genomes.begin() + static_cast<std::ptrdiff_t>(offset * batch.genome_size));
    offset += size;
  }
}

void MixtureEmitter::tell(const Batch& batch, std::span<const InsertResult> results) {
  if (random_batch_) return;
  std::vector<std::size_t> offsets(emitters_.size(), 0);
  for (std::size_t k = 1; k < emitters_.size(); ++k)
    offsets[k] = offsets[k - 1] + parts_[k - 1].count;
  // Emitters update independently of each other (each its own strategy and eigendecomposition),
  // so they do it in parallel; the outcome does not depend on the order.
  tbb::parallel_for(std::size_t{0}, emitters_.size(), [&](std::size_t k) {
    Batch& part = parts_[k];
    const std::size_t size = part.count;
    if (size == 0) return;
    const auto d = static_cast<std::ptrdiff_t>(batch.descriptor_size);
    const auto e = static_cast<std::ptrdiff_t>(batch.extra_size);
    const auto from = static_cast<std::ptrdiff_t>(offsets[k]);
    const auto to = static_cast<std::ptrdiff_t>(offsets[k] + size);
    std::copy(batch.fitness.begin() + from, batch.fitness.begin() + to, part.fitness.begin());
    std::copy(batch.valid.begin() + from, batch.valid.begin() + to, part.valid.begin());
    std::copy(batch.descriptors.begin() + from * d, batch.descriptors.begin() + to * d,
              part.descriptors.begin());
    std::copy(batch.extras.begin() + from * e, batch.extras.begin() + to * e, part.extras.begin());
    emitters_[k]->tell(part, results.subspan(offsets[k], size));
  });
}

void MixtureEmitter::save(ResumeState& state) const {
  for (const auto& e : emitters_) e->save(state);
}

void MixtureEmitter::load(const ResumeState& state) {
  for (const auto& e : emitters_) e->load(state);
}

std::size_t emitter_list_batch(const std::vector<EmitterSpec>& specs, std::size_t genome_size) {
  std::size_t total = 0;
  for (const auto& s : specs) total += s.count * entry_size(s, genome_size);
  return total;
}

std::unique_ptr<MixtureEmitter> make_emitter_mixture(const std::vector<EmitterSpec>& specs,
                                                     std::size_t genome_size) {
  std::vector<std::unique_ptr<Emitter>> emitters;
  std::vector<std::size_t> sizes;
  std::optional<double> rate;
  for (const auto& spec : specs) {
    if (spec.count == 0) throw std::invalid_argument("an emitter entry needs count >= 1");
    const std::size_t size = entry_size(spec, genome_size);
    for (std::size_t c = 0; c < spec.count; ++c) {
      const std::string key = "emitter." + std::to_string(emitters.size());
      if (spec.kind == "variation") {
        emitters.push_back(std::make_unique<VariationEmitter>(spec.variation));
      } else if (spec.kind == "cma-me" || spec.kind == "cma-mae") {
        CmaEmitterSettings settings = spec.cma;
        settings.lambda = size;
        if (spec.kind == "cma-mae") {
          settings.ranking = CmaRanking::threshold;
          if (rate && *rate != settings.learning_rate)
            throw std::invalid_argument(
                "cma-mae emitters share one archive and so one learning_rate");
          rate = settings.learning_rate;
        } else if (settings.ranking == CmaRanking::threshold) {
          settings.ranking = CmaRanking::improvement;
        }
        emitters.push_back(std::make_unique<CmaEmitter>(settings, genome_size, key));
      } else {
        throw std::invalid_argument("unknown emitter kind '" + spec.kind +
                                    "' (choose variation, cma-me or cma-mae)");
      }
      sizes.push_back(size);
    }
  }
  return std::make_unique<MixtureEmitter>(std::move(emitters), std::move(sizes));
}

}  // namespace tessera
