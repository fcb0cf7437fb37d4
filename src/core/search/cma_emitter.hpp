// Covariance-adapting emitters: one CMA-ES per emitter, its samples ranked by what the archive
// did with them. Rankings: CMA-ME's improvement (new cells first, by fitness, then improvements,
// by the gain over the replaced elite), random direction (accepted candidates first, by their
// descriptor's projection on a random direction) and optimising (by fitness), after Fontaine et
// al., GECCO 2020; and CMA-MAE's threshold improvement f - t_cell against the archive's
// acceptance thresholds (Fontaine & Nikolaidis, ICLR 2023).
//
// The strategy works in genome coordinates scaled to [0, 1] per parameter, so the step size is
// a fraction of each parameter's range like the other operators. Bounds: a sample outside the
// box is redrawn (up to 16 times, from the same candidate's stream), then clipped; the update
// uses the point actually evaluated. Redrawing keeps the samples distributed as the normal
// restricted to the box, where clipping alone piles samples on the faces and teaches the
// covariance a shape the problem does not have; the clip fallback bounds the cost when the
// mean sits against a face.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/search/cma_es.hpp"
#include "core/search/emitter.hpp"

namespace tessera {

enum class CmaRanking { improvement, random_direction, optimising, threshold };

CmaRanking parse_cma_ranking(const std::string& name);  // throws invalid_argument
const char* to_string(CmaRanking ranking);

struct CmaEmitterSettings {
  CmaRanking ranking = CmaRanking::improvement;
  std::size_t lambda = 0;       // samples per generation; 0 = 4 + floor(3 ln n) (tutorial)
  double sigma = 0.05;          // initial step, fraction of each parameter's range
  std::uint64_t patience = 1;   // generations without an archive gain before a restart; 0 = off
  double learning_rate = 0.01;  // threshold ranking: the archive learning rate alpha (CMA-MAE)
};

class CmaEmitter final : public Emitter {
 public:
  // state_key names this emitter's array in the resume state.
  CmaEmitter(CmaEmitterSettings settings, std::size_t genome_size, std::string state_key);

  std::string name() const override { return "cma"; }
  std::size_t lambda() const { return es_.lambda(); }
  void ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) override;
  void tell(const Batch& batch, std::span<const InsertResult> results) override;
  void save(ResumeState& state) const override;
  void load(const ResumeState& state) override;
  std::optional<double> archive_learning_rate() const override;

  std::uint64_t restarts() const { return restarts_; }
  const CmaEs& strategy() const { return es_; }
  // Order in which the last generation's samples were ranked (best first), for tests.
  const std::vector<std::size_t>& last_order() const { return order_; }

 private:
  void start(const EliteArchive& archive, const EmitContext& context);

  CmaEmitterSettings settings_;
  std::string state_key_;
  CmaEs es_;
  bool started_ = false;  // false until the first ask and after a restart
  std::uint64_t restarts_ = 0;
  std::uint64_t stale_ = 0;        // generations in a row without an archive gain
  std::vector<double> direction_;  // random-direction ranking: unit vector in descriptor space
  std::vector<double> samples_;    // [lambda * n], scaled coordinates of the last ask
  std::vector<std::size_t> order_;
};

}  // namespace tessera
