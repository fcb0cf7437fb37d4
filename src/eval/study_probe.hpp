// Probe measure of a study: re-evaluates a run's elites (all, or the best N by fitness) in another
// problem with the same genome (another arena), as `tessera transfer` does, and condenses them to
// per-run figures: the median of extra figures over the valid evaluations, and the share of
// elites that reached each named place (its "<place>_time" figure is >= 0).
#pragma once

#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "problems/problem.hpp"

namespace tessera {

struct ProbeRequest {
  std::vector<std::string> figures;  // extra figures: median over valid evaluations
  std::vector<std::string> places;   // share reaching "<place>_time" >= 0
  std::size_t best = 0;              // the best N elites; 0 = all
};

struct ProbeResult {
  std::vector<std::optional<double>> medians;  // per figure; empty = no valid evaluation
  std::vector<std::optional<double>> shares;   // per place
  std::size_t evaluated = 0;
  std::size_t valid = 0;
};

// Throws std::invalid_argument naming a figure or place the problem does not report.
void check_probe(const ProblemInfo& info, const ProbeRequest& request);

// `genomes` holds fitness.size() rows of the problem's genome size.
ProbeResult probe_elites(const std::shared_ptr<const Problem>& problem, std::size_t threads,
                         std::span<const double> genomes, std::span<const double> fitness,
                         const ProbeRequest& request);

}  // namespace tessera
