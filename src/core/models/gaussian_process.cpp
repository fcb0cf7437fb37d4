#include "core/models/gaussian_process.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

namespace tessera {
namespace {

double distance(std::span<const double> a, std::span<const double> b) {
  double sum = 0.0;
  for (std::size_t i = 0; i < a.size(); ++i) sum += (a[i] - b[i]) * (a[i] - b[i]);
  return std::sqrt(sum);
}

}  // namespace

void check_gp_settings(const GpSettings& s) {
  if (!std::isfinite(s.length_scale) || !(s.length_scale > 0.0))
    throw std::invalid_argument("GP length scale must be a positive number");
  if (!std::isfinite(s.signal_variance) || !(s.signal_variance > 0.0))
    throw std::invalid_argument("GP signal variance must be a positive number");
  if (!std::isfinite(s.noise) || !(s.noise >= 0.0))
    throw std::invalid_argument("GP noise must be a number >= 0");
}

double matern52(double r, double l, double s2) {
  // Rasmussen & Williams 2006, eq. 4.17 with nu = 5/2.
  const double a = std::sqrt(5.0) * r / l;
  return s2 * (1.0 + a + a * a / 3.0) * std::exp(-a);
}

GaussianProcess::GaussianProcess(std::size_t dims, GpSettings settings)
    : dims_(dims), settings_(settings) {
  if (dims == 0) throw std::invalid_argument("GP inputs need at least one dimension");
  check_gp_settings(settings_);
}

double GaussianProcess::kernel(std::span<const double> a, std::span<const double> b) const {
  return matern52(distance(a, b), settings_.length_scale, settings_.signal_variance);
}

void GaussianProcess::add(std::span<const double> x, double y, double prior_mean) {
  if (x.size() != dims_) throw std::invalid_argument("GP observation has the wrong dimension");
  if (!std::isfinite(y) || !std::isfinite(prior_mean))
    throw std::invalid_argument("GP observation or prior mean is not finite");
  const std::size_t n = size();
  // l solves L l = k(X, x) by forward substitution on the existing factor.
  Eigen::VectorXd l(static_cast<Eigen::Index>(n));
  for (std::size_t j = 0; j < n; ++j) {
    double v = kernel(row(inputs_, j), x);
    for (std::size_t k = 0; k < j; ++k) v -= factor_(j, k) * l(k);
    l(j) = v / factor_(j, j);
  }
  const double d2 = settings_.signal_variance + settings_.noise - l.squaredNorm();
  if (!(d2 > 0.0))
    throw std::invalid_argument(
        "GP covariance is not positive definite (repeated input with "
        "zero noise?)");
  const double d = std::sqrt(d2);

  factor_.conservativeResize(n + 1, n + 1);
  factor_.row(n).head(n) = l.transpose();
  factor_.col(n).head(n).setZero();
  factor_(n, n) = d;
  beta_.conservativeResize(n + 1);
  beta_(n) = (y - prior_mean - (n ? l.dot(beta_.head(n)) : 0.0)) / d;

  inputs_.insert(inputs_.end(), x.begin(), x.end());
  prior_.push_back(prior_mean);
  extend_queries(n, d);
}

void GaussianProcess::predict(std::span<const double> points, std::span<const double> prior_means,
                              std::span<double> mean, std::span<double> variance) const {
  const std::size_t m = prior_means.size();
  if (points.size() != m * dims_ || mean.size() != m || variance.size() != m)
    throw std::invalid_argument("GP predict: arrays of mismatched sizes");
  const std::size_t n = size();
  const auto nn = static_cast<Eigen::Index>(n);
  Eigen::MatrixXd v(nn, static_cast<Eigen::Index>(m));
  for (std::size_t q = 0; q < m; ++q)
    for (std::size_t j = 0; j < n; ++j)
      v(static_cast<Eigen::Index>(j), static_cast<Eigen::Index>(q)) =
          kernel(row(inputs_, j), points.subspan(q * dims_, dims_));
  if (n > 0) factor_.triangularView<Eigen::Lower>().solveInPlace(v);
  for (std::size_t q = 0; q < m; ++q) {
    const auto col = v.col(static_cast<Eigen::Index>(q));
    mean[q] = prior_means[q] + (n ? col.dot(beta_) : 0.0);
    variance[q] = std::max(0.0, settings_.signal_variance - col.squaredNorm());
  }
}

void GaussianProcess::set_queries(std::span<const double> points,
                                  std::span<const double> prior_means) {
  const std::size_t m = prior_means.size();
  if (points.size() != m * dims_)
    throw std::invalid_argument("GP queries: points and prior means disagree in count");
  query_points_.assign(points.begin(), points.end());
  query_prior_.assign(prior_means.begin(), prior_means.end());
  const auto mm = static_cast<Eigen::Index>(m);
  query_v_.resize(static_cast<Eigen::Index>(size()), mm);
  query_mean_ = Eigen::Map<const Eigen::VectorXd>(query_prior_.data(), mm);
  query_var_ = Eigen::VectorXd::Constant(mm, settings_.signal_variance);
  // Replay the observations already held, row by row, exactly as add() would have.
  for (std::size_t j = 0; j < size(); ++j) extend_queries(j, factor_(j, j));
}

void GaussianProcess::extend_queries(std::size_t j, double d) {
  const std::size_t m = query_prior_.size();
  if (m == 0) return;
  const auto jj = static_cast<Eigen::Index>(j);
  if (query_v_.rows() < jj + 1) query_v_.conservativeResize(jj + 1, static_cast<Eigen::Index>(m));
  const auto x = row(inputs_, j);
  for (std::size_t q = 0; q < m; ++q) {
    const auto qq = static_cast<Eigen::Index>(q);
    // Row j of L^-1 k(X, q): (k(x_j, q) - sum_k L(j, k) V(k, q)) / L(j, j).
    double value = kernel(x, row(query_points_, q));
    for (Eigen::Index k = 0; k < jj; ++k) value -= factor_(jj, k) * query_v_(k, qq);
    value /= d;
    query_v_(jj, qq) = value;
    query_mean_(qq) += value * beta_(jj);
    query_var_(qq) -= value * value;
  }
}

double GaussianProcess::query_mean(std::size_t i) const {
  return query_mean_(static_cast<Eigen::Index>(i));
}

double GaussianProcess::query_variance(std::size_t i) const {
  return std::max(0.0, query_var_(static_cast<Eigen::Index>(i)));
}

}  // namespace tessera
