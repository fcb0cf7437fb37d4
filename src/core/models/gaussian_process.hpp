// Gaussian-process regression with a Matérn nu = 5/2 kernel and a non-zero prior mean given per
// point (Rasmussen & Williams, Gaussian Processes for Machine Learning, 2006, eqs. 2.25-2.26 and
// 4.17). Observations arrive one at a time, so the Cholesky factor of K + noise I is extended by
// one row per observation instead of being refactorised. A fixed set of query points (the elites
// of a map) can be registered once; their posterior then updates in O(points x observations)
// per observation.
#pragma once

#include <Eigen/Dense>
#include <cstddef>
#include <span>
#include <vector>

namespace tessera {

struct GpSettings {
  double length_scale = 0.4;     // rho, in the units of the inputs
  double signal_variance = 1.0;  // k(x, x)
  double noise = 0.001;          // observation noise variance, added to the diagonal of K
};

// Throws std::invalid_argument unless every setting is finite, the length scale and the signal
// variance are positive and the noise is >= 0.
void check_gp_settings(const GpSettings& settings);

// k(r) = s2 (1 + sqrt5 r / l + 5 r^2 / (3 l^2)) exp(-sqrt5 r / l), r = Euclidean distance.
double matern52(double distance, double length_scale, double signal_variance);

class GaussianProcess {
 public:
  GaussianProcess(std::size_t dims, GpSettings settings);

  std::size_t dims() const { return dims_; }
  std::size_t size() const { return prior_.size(); }  // observations so far
  const GpSettings& settings() const { return settings_; }

  double kernel(std::span<const double> a, std::span<const double> b) const;

  // Adds an observation y at x whose prior mean is `prior_mean`: one new row of the Cholesky
  // factor (L l = k(X, x), d = sqrt(k(x, x) + noise - l.l)). Throws std::invalid_argument when
  // the extended matrix is not positive definite (a repeated point with zero noise).
  void add(std::span<const double> x, double y, double prior_mean);

  // Posterior mean and variance of the latent function (noise excluded) at `count` points stored
  // row-major in points[count * dims], with prior means prior_means[count].
  void predict(std::span<const double> points, std::span<const double> prior_means,
               std::span<double> mean, std::span<double> variance) const;

  // Registers points whose posterior is kept up to date as observations arrive.
  void set_queries(std::span<const double> points, std::span<const double> prior_means);
  std::size_t query_count() const { return query_prior_.size(); }
  double query_mean(std::size_t i) const;
  double query_variance(std::size_t i) const;  // latent function, noise excluded, >= 0

 private:
  std::span<const double> row(const std::vector<double>& rows, std::size_t i) const {
    return {rows.data() + i * dims_, dims_};
  }
  void extend_queries(std::size_t observation, double diagonal);

  std::size_t dims_;
  GpSettings settings_;
  std::vector<double> inputs_;  // [n * dims]
  std::vector<double> prior_;   // prior mean at each observation
  Eigen::MatrixXd factor_;      // L, lower triangular, n x n
  Eigen::VectorXd beta_;        // L^-1 (y - prior)

  std::vector<double> query_points_;  // [m * dims]
  std::vector<double> query_prior_;
  Eigen::MatrixXd query_v_;     // L^-1 k(X, Q), n x m (row j added with observation j)
  Eigen::VectorXd query_mean_;  // prior + V^T beta
  Eigen::VectorXd query_var_;   // s2 - column sums of V^2
};

}  // namespace tessera
