// An in-process arm problem for engine tests, written from the README.md definition (planar arm,
// links 1/n, end effector = sum (1/n)(cos a_i, sin a_i), fitness = -variance of the angles).
// Optionally reports NaN for a deterministic share of genomes, to exercise invalid handling.
#pragma once

#include <cmath>
#include <memory>
#include <numbers>

#include "problems/problem.hpp"

namespace tessera::testing {

class ArmTestProblem final : public Problem {
 public:
  explicit ArmTestProblem(std::size_t joints, bool with_nans = false) : with_nans_(with_nans) {
    info_.name = "arm-test";
    info_.genome = {std::vector<double>(joints, -std::numbers::pi),
                    std::vector<double>(joints, std::numbers::pi)};
    info_.descriptor = {{-1.0, -1.0}, {1.0, 1.0}};
    info_.descriptor_names = {"x", "y"};
    info_.fitness_lower = -std::numbers::pi * std::numbers::pi;
    info_.fitness_upper = 0.0;
    info_.origin = "test";
  }
  const ProblemInfo& info() const override { return info_; }
  std::unique_ptr<ProblemInstance> make_instance() const override {
    return std::make_unique<Instance>(with_nans_);
  }

 private:
  struct Instance final : ProblemInstance {
    explicit Instance(bool nans) : nans(nans) {}
    void evaluate(Batch& b, std::size_t first, std::size_t count) override {
      const std::size_t n = b.genome_size;
      for (std::size_t k = first; k < first + count; ++k) {
        const auto g = b.genome(k);
        double a = 0, x = 0, y = 0, mean = 0;
        for (std::size_t i = 0; i < n; ++i) {
          a += g[i];
          x += std::cos(a) / static_cast<double>(n);
          y += std::sin(a) / static_cast<double>(n);
          mean += g[i] / static_cast<double>(n);
        }
        double var = 0;
        for (std::size_t i = 0; i < n; ++i) var += (g[i] - mean) * (g[i] - mean);
        b.fitness[k] = -var / static_cast<double>(n);
        b.descriptors[k * 2] = x;
        b.descriptors[k * 2 + 1] = y;
        b.valid[k] = 1;
        // About 5% NaN, decided by the genome itself so it is deterministic.
        if (nans && std::fmod(std::fabs(g[0]) * 1000.0, 20.0) < 1.0)
          b.fitness[k] = std::numeric_limits<double>::quiet_NaN();
      }
    }
    bool nans;
  };
  ProblemInfo info_;
  bool with_nans_;
};

}  // namespace tessera::testing
