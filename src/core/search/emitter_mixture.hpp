// Several emitters sharing each batch: emitter k fills the next `size_k` candidates and is told
// about exactly those. Each one draws from streams keyed by its own position in the mixture, so
// two emitters of one kind never repeat each other's draws, and the batch stays independent of
// threads. While the initial random phase lasts, the whole batch is random genomes.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "core/search/cma_emitter.hpp"
#include "core/search/emitter.hpp"
#include "core/search/variation_emitter.hpp"

namespace tessera {

// One entry of the run file's emitter list: `count` emitters of one kind, `batch` candidates
// each per batch.
struct EmitterSpec {
  std::string kind = "cma-me";  // variation | cma-me | cma-mae
  std::size_t count = 1;
  std::size_t batch = 0;        // candidates per emitter; 0 = CMA-ES default lambda
  VariationSettings variation;  // kind = variation
  CmaEmitterSettings cma;       // kind = cma-me | cma-mae
};

class MixtureEmitter final : public Emitter {
 public:
  MixtureEmitter(std::vector<std::unique_ptr<Emitter>> emitters, std::vector<std::size_t> sizes);

  std::string name() const override { return "mixture"; }
  void ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) override;
  void tell(const Batch& batch, std::span<const InsertResult> results) override;
  void save(ResumeState& state) const override;
  void load(const ResumeState& state) override;
  std::optional<double> archive_learning_rate() const override;

  std::size_t batch_size() const;  // sum of the sizes
  const Emitter& emitter(std::size_t k) const { return *emitters_[k]; }
  std::size_t emitter_count() const { return emitters_.size(); }

 private:
  std::vector<std::unique_ptr<Emitter>> emitters_;
  std::vector<std::size_t> sizes_;
  std::vector<Batch> parts_;
  bool random_batch_ = false;  // the last ask made the initial random genomes
};

// Builds the mixture a run file's emitter list describes. Throws std::invalid_argument when the
// entries disagree (two archive learning rates) or a value is impossible.
std::unique_ptr<MixtureEmitter> make_emitter_mixture(const std::vector<EmitterSpec>& specs,
                                                     std::size_t genome_size);

// Candidates per batch of an emitter list (sum of count * batch, defaults resolved).
std::size_t emitter_list_batch(const std::vector<EmitterSpec>& specs, std::size_t genome_size);

}  // namespace tessera
