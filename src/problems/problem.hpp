// The Problem interface the engine sees. A Problem describes itself once and makes one
// ProblemInstance per worker thread; instances evaluate batches of genomes. Shipped problems are
// plugins (include/tessera/plugin.h) wrapped by PluginProblem; external evaluator processes and
// test doubles implement the same interface.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/base/types.hpp"
#include "problems/figure.hpp"

namespace tessera {

struct ProblemInfo {
  std::string name;
  std::string summary;
  Bounds genome;
  Bounds descriptor;
  std::vector<std::string> descriptor_names;
  double fitness_lower = 0.0;  // the QD-score offset
  double fitness_upper = 0.0;
  std::vector<std::string> extra_names;
  std::string origin;  // plugin path, "process: CMD", "built-in", ...
  std::uint32_t abi_version = 0;
  // What the problem can draw (plugins: tsr_scene / tsr_trace exported). Processes answer or
  // not only when asked, so for them both stay false until a report asks.
  bool draws_scene = false;
  bool gives_traces = false;

  std::size_t genome_size() const { return genome.size(); }
  std::size_t descriptor_size() const { return descriptor.size(); }
};

// Evaluates batch.count genomes in place: fills fitness, descriptors, valid and extras.
// An instance is used by one thread at a time. Throws std::runtime_error with a one-line
// reason when the whole batch failed.
class ProblemInstance {
 public:
  virtual ~ProblemInstance() = default;
  virtual void evaluate(Batch& batch, std::size_t first, std::size_t count) = 0;
};

class Problem {
 public:
  virtual ~Problem() = default;
  virtual const ProblemInfo& info() const = 0;
  virtual std::unique_ptr<ProblemInstance> make_instance() const = 0;
  // Failure counts by reason for problems that can fail per evaluation (external processes).
  virtual std::vector<std::pair<std::string, std::uint64_t>> failure_counts() const { return {}; }

  // Optional capabilities (plugin ABI version 2, process protocol scene/trace messages).
  // std::nullopt: the problem gives none. std::runtime_error with one line when the problem
  // could not draw. Safe from any thread; not meant for the evaluation loop.
  // The problem's static geometry in its own units.
  virtual std::optional<Figure> scene() const { return std::nullopt; }
  // What one genome (genome_size() numbers) does.
  virtual std::optional<Figure> trace(const std::vector<double>& /*genome*/) const {
    return std::nullopt;
  }
};

// Throws std::invalid_argument naming the problem if the description is inconsistent.
void check_problem_info(const ProblemInfo& info);

}  // namespace tessera
