// CMA-ES (Hansen, "The CMA Evolution Strategy: A Tutorial", arXiv:1604.00772, 2016): a
// multivariate normal N(m, sigma^2 C) with full covariance, adapted from ranked samples by
// weighted recombination of the mean, cumulative step-size adaptation (CSA) and the rank-one and
// rank-mu covariance updates. Constants are the tutorial's defaults (its Table 1). The
// eigendecomposition C = B D^2 B^T is refreshed lazily, as the tutorial recommends, so sampling
// costs O(n^2) per candidate and the O(n^3) decomposition is amortised over generations.
// The strategy knows nothing of bounds or archives: emitters own those.
#pragma once

#include <Eigen/Dense>

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "core/base/rng.hpp"

namespace tessera {

// Recombination weights and learning rates for one update.
struct CmaConstants {
  std::size_t n = 0;
  std::size_t lambda = 0;
  std::size_t mu = 0;           // number of positive weights
  std::vector<double> weights;  // lambda values, best first; negative ones for active CMA
  double mueff = 0.0;
  double cc = 0.0, cs = 0.0, c1 = 0.0, cmu = 0.0, damps = 0.0, cm = 1.0;
};

// Default population size 4 + floor(3 ln n) (tutorial, Table 1).
std::size_t cma_default_lambda(std::size_t n);

// Table 1 of the tutorial: mu = floor(lambda / 2) positive weights ln((lambda+1)/2) - ln i,
// and negative weights for the rest (active CMA), scaled as the table says.
CmaConstants cma_default_constants(std::size_t n, std::size_t lambda);

// Only the first `parents` (1..lambda) ranked samples recombine, with positive weights
// ln(parents + 1/2) - ln i and no negative ones (the classic weights, tutorial eq. 49 form,
// from memory); the learning rates follow Table 1 for the resulting mueff. CMA-ME's
// "filter" selection uses this with parents = number of candidates the archive accepted.
CmaConstants cma_parent_constants(std::size_t n, std::size_t lambda, std::size_t parents);

class CmaEs {
 public:
  // mean in the strategy's coordinates, initial step size sigma0 > 0, C = I.
  CmaEs(std::vector<double> mean, double sigma0, std::size_t lambda);

  std::size_t dimensions() const { return static_cast<std::size_t>(mean_.size()); }
  std::size_t lambda() const { return lambda_; }

  // Back to C = I, zero paths, step size sigma0, a new mean.
  void reset(std::span<const double> mean);

  // One sample x = m + sigma B D z, z ~ N(0, I) drawn from rng.
  void sample(Rng& rng, std::span<double> x) const;

  // One generation's update from lambda samples ranked best first (rows of `ranked`, each the
  // point that was actually evaluated). Uses `constants` (default or parent-filtered).
  void tell(std::span<const std::span<const double>> ranked, const CmaConstants& constants);

  // When set, the eigendecomposition is refreshed after every update (tests compare one
  // generation with a transcription that decomposes every time).
  void set_eager_decomposition(bool eager) { eager_ = eager; }

  // Stop criteria of the tutorial's Appendix B (from memory): condition number of C above 1e14,
  // a step sigma * sqrt(largest eigenvalue) below 1e-12 (no effect in double precision) or
  // above 1e8 times sigma0 (divergence), or a non-finite value anywhere.
  bool stalled() const;

  const Eigen::VectorXd& mean() const { return mean_; }
  const Eigen::VectorXd& path_c() const { return pc_; }
  const Eigen::VectorXd& path_sigma() const { return ps_; }
  const Eigen::MatrixXd& covariance() const { return C_; }
  double sigma() const { return sigma_; }
  double sigma0() const { return sigma0_; }
  std::uint64_t generation() const { return generation_; }

  // The whole state as numbers (for checkpoints) and back, bit-exactly.
  void save(std::vector<double>& out) const;
  // Reads what save wrote from `in` starting at `pos`, advancing it; throws invalid_argument.
  void load(std::span<const double> in, std::size_t& pos);

 private:
  void decompose();

  std::size_t lambda_;
  double sigma0_;
  double sigma_;
  Eigen::VectorXd mean_;
  Eigen::VectorXd pc_;
  Eigen::VectorXd ps_;
  Eigen::MatrixXd C_;
  Eigen::MatrixXd B_;  // eigenvectors of C (columns)
  Eigen::VectorXd D_;  // square roots of the eigenvalues
  std::uint64_t generation_ = 0;
  std::uint64_t evaluations_ = 0;
  std::uint64_t decomposed_at_ = 0;  // evaluations_ at the last decomposition
  bool eager_ = false;
};

}  // namespace tessera
