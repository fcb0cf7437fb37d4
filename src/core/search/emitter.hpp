// Emitters are sources of new candidates. The search loop asks an emitter for a batch of
// genomes, evaluates them, offers them to the archive and tells the emitter what happened, so
// new emitters (CMA-based, novelty-driven, ...) plug in without touching the loop.
#pragma once

#include <cstdint>
#include <optional>
#include <span>
#include <string>

#include "core/archive/archive.hpp"
#include "core/archive/snapshot.hpp"
#include "core/base/types.hpp"

namespace tessera {
struct StartGenomes;
}

namespace tessera {

struct EmitContext {
  std::uint64_t seed = 0;
  std::uint64_t batch_index = 0;      // keys the random streams together with the candidate
  std::uint64_t first_candidate = 0;  // global index of the batch's first candidate
  std::uint64_t initial = 0;          // candidates with a global index below this are random
  const Bounds* genome_bounds = nullptr;
  const StartGenomes* start = nullptr;           // initial candidates from these instead of uniform
  StreamVersion streams = kLatestStreamVersion;  // how normal deviates are drawn
};

class Emitter {
 public:
  virtual ~Emitter() = default;
  virtual std::string name() const = 0;
  // Writes batch.count genomes into batch.genomes. Must draw randomness only from streams keyed
  // by (seed, batch_index, candidate) so that the result never depends on threads.
  virtual void ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) = 0;
  // Emitters whose every candidate depends only on the archive and the candidate's own streams
  // can make any part of a batch alone (ask() equals ask_range() over the whole batch), which
  // lets the loop make, evaluate and place a chunk on one thread in one parallel pass.
  virtual bool makes_candidates_independently() const { return false; }
  virtual void ask_range(const EliteArchive& /*archive*/, const EmitContext& /*context*/,
                         Batch& /*batch*/, std::size_t /*first*/, std::size_t /*count*/) {}
  // Sees the evaluated batch and the archive's answer for each candidate.
  virtual void tell(const Batch& /*batch*/, std::span<const InsertResult> /*results*/) {}
  // Emitters with state beyond the random streams save it for checkpoints.
  virtual void save(ResumeState& /*state*/) const {}
  virtual void load(const ResumeState& /*state*/) {}
  // Emitters ranking against acceptance thresholds (CMA-MAE) ask the archive to keep them,
  // moving at this learning rate.
  virtual std::optional<double> archive_learning_rate() const { return std::nullopt; }
};

}  // namespace tessera
