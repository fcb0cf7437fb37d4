// The MAP-Elites emitter: parents drawn uniformly from the elites, children from a variation
// operator (Iso+LineDD or Gaussian mutation); random genomes while the archive is empty or
// during the initial random phase.
#pragma once

#include <string>

#include "core/search/emitter.hpp"

namespace tessera {

enum class VariationOperator { iso_line_dd, gaussian };

struct VariationSettings {
  VariationOperator op = VariationOperator::iso_line_dd;
  double sigma_iso = 0.01;  // Iso+LineDD isotropic step, fraction of range (from memory)
  double sigma_line = 0.2;  // Iso+LineDD line step (from memory)
  double sigma = 0.05;      // Gaussian mutation step, fraction of range (common practice)
};

VariationOperator parse_variation_operator(const std::string& name);  // throws invalid_argument
const char* to_string(VariationOperator op);

class VariationEmitter final : public Emitter {
 public:
  explicit VariationEmitter(VariationSettings settings) : settings_(settings) {}
  std::string name() const override { return "variation"; }
  void ask(const EliteArchive& archive, const EmitContext& context, Batch& batch) override;
  bool makes_candidates_independently() const override { return true; }
  void ask_range(const EliteArchive& archive, const EmitContext& context, Batch& batch,
                 std::size_t first, std::size_t count) override;

 private:
  VariationSettings settings_;
};

}  // namespace tessera
