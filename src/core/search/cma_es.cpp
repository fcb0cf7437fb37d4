#include "core/search/cma_es.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

namespace tessera {
namespace {

using Index = Eigen::Index;

// Learning rates of Table 1 for a given mueff (alpha_cov = 2; c_mu with the 2016 numerator
// mueff - 2 + 1/mueff).
void learning_rates(CmaConstants& k) {
  const double n = static_cast<double>(k.n);
  const double mueff = k.mueff;
  const double alpha_cov = 2.0;
  k.cc = (4.0 + mueff / n) / (n + 4.0 + 2.0 * mueff / n);
  k.cs = (mueff + 2.0) / (n + mueff + 5.0);
  k.damps = 1.0 + 2.0 * std::max(0.0, std::sqrt((mueff - 1.0) / (n + 1.0)) - 1.0) + k.cs;
  k.c1 = alpha_cov / ((n + 1.3) * (n + 1.3) + mueff);
  k.cmu = std::min(1.0 - k.c1, alpha_cov * (mueff - 2.0 + 1.0 / mueff) /
                                   ((n + 2.0) * (n + 2.0) + alpha_cov * mueff / 2.0));
  k.cm = 1.0;
}

double effective_mass(const std::vector<double>& w, std::size_t from, std::size_t to) {
  double sum = 0.0;
  double squares = 0.0;
  for (std::size_t i = from; i < to; ++i) {
    sum += w[i];
    squares += w[i] * w[i];
  }
  return sum * sum / squares;
}

// E||N(0, I)|| (tutorial, approximation below eq. 30).
double expected_norm(double n) {
  return std::sqrt(n) * (1.0 - 1.0 / (4.0 * n) + 1.0 / (21.0 * n * n));
}

}  // namespace

std::size_t cma_default_lambda(std::size_t n) {
  return 4 + static_cast<std::size_t>(std::floor(3.0 * std::log(static_cast<double>(n))));
}

CmaConstants cma_default_constants(std::size_t n, std::size_t lambda) {
  if (n == 0 || lambda < 2) throw std::invalid_argument("CMA-ES needs n >= 1 and lambda >= 2");
  CmaConstants k;
  k.n = n;
  k.lambda = lambda;
  k.mu = lambda / 2;
  std::vector<double> w(lambda);
  for (std::size_t i = 0; i < lambda; ++i)
    w[i] =
        std::log((static_cast<double>(lambda) + 1.0) / 2.0) - std::log(static_cast<double>(i + 1));
  k.mueff = effective_mass(w, 0, k.mu);
  const double mueff_minus = k.mu < lambda ? effective_mass(w, k.mu, lambda) : 0.0;
  learning_rates(k);
  double positive = 0.0;
  double negative = 0.0;
  for (std::size_t i = 0; i < lambda; ++i) (i < k.mu ? positive : negative) += std::fabs(w[i]);
  const double alpha_mu = 1.0 + k.c1 / k.cmu;
  const double alpha_mueff = 1.0 + 2.0 * mueff_minus / (k.mueff + 2.0);
  const double alpha_posdef = (1.0 - k.c1 - k.cmu) / (static_cast<double>(n) * k.cmu);
  const double scale = std::min({alpha_mu, alpha_mueff, alpha_posdef});
  k.weights.resize(lambda);
  for (std::size_t i = 0; i < lambda; ++i)
    k.weights[i] = i < k.mu ? w[i] / positive : (negative > 0.0 ? scale * w[i] / negative : 0.0);
  return k;
}

CmaConstants cma_parent_constants(std::size_t n, std::size_t lambda, std::size_t parents) {
  if (n == 0 || parents == 0 || parents > lambda)
    throw std::invalid_argument("CMA-ES parents must lie in 1..lambda");
  CmaConstants k;
  k.n = n;
  k.lambda = lambda;
  k.mu = parents;
  k.weights.assign(lambda, 0.0);
  double sum = 0.0;
  for (std::size_t i = 0; i < parents; ++i) {
    k.weights[i] =
        std::log(static_cast<double>(parents) + 0.5) - std::log(static_cast<double>(i + 1));
    sum += k.weights[i];
  }
  for (std::size_t i = 0; i < parents; ++i) k.weights[i] /= sum;
  k.mueff = effective_mass(k.weights, 0, parents);
  learning_rates(k);
  return k;
}

CmaEs::CmaEs(std::vector<double> mean, double sigma0, std::size_t lambda)
    : lambda_(lambda), sigma0_(sigma0), sigma_(sigma0) {
  if (mean.empty()) throw std::invalid_argument("CMA-ES needs at least one dimension");
  if (!(sigma0 > 0.0) || !std::isfinite(sigma0))
    throw std::invalid_argument("CMA-ES initial step size must be a finite number > 0");
  if (lambda < 2) throw std::invalid_argument("CMA-ES needs at least 2 samples per generation");
  reset(mean);
}

void CmaEs::reset(std::span<const double> mean) {
  const auto n = static_cast<Index>(mean.size());
  mean_ = Eigen::Map<const Eigen::VectorXd>(mean.data(), n);
  pc_ = Eigen::VectorXd::Zero(n);
  ps_ = Eigen::VectorXd::Zero(n);
  C_ = Eigen::MatrixXd::Identity(n, n);
  B_ = Eigen::MatrixXd::Identity(n, n);
  D_ = Eigen::VectorXd::Ones(n);
  sigma_ = sigma0_;
  generation_ = 0;
  evaluations_ = 0;
  decomposed_at_ = 0;
}

void CmaEs::sample(Rng& rng, std::span<double> x) const {
  const auto n = mean_.size();
  Eigen::VectorXd z(n);
  rng.normals({z.data(), static_cast<std::size_t>(n)});
  const Eigen::VectorXd y = B_ * D_.cwiseProduct(z);
  for (Index i = 0; i < n; ++i) x[static_cast<std::size_t>(i)] = mean_[i] + sigma_ * y[i];
}

void CmaEs::tell(std::span<const std::span<const double>> ranked, const CmaConstants& k) {
  const auto n = mean_.size();
  const double nd = static_cast<double>(n);
  if (ranked.size() != k.lambda || k.n != static_cast<std::size_t>(n))
    throw std::invalid_argument("CMA-ES update: sample count or dimension mismatch");
  // y_i = (x_i - m) / sigma, ranked best first.
  Eigen::MatrixXd Y(n, static_cast<Index>(k.lambda));
  for (std::size_t i = 0; i < k.lambda; ++i)
    for (Index r = 0; r < n; ++r)
      Y(r, static_cast<Index>(i)) = (ranked[i][static_cast<std::size_t>(r)] - mean_[r]) / sigma_;
  Eigen::VectorXd yw = Eigen::VectorXd::Zero(n);
  for (std::size_t i = 0; i < k.lambda; ++i)
    if (k.weights[i] > 0.0) yw += k.weights[i] * Y.col(static_cast<Index>(i));
  // C^{-1/2} v = B D^{-1} B^T v from the current (possibly lazily kept) decomposition, applied
  // to vectors so an update costs O(n^2 lambda), not O(n^3).
  const Eigen::VectorXd inv_d = D_.cwiseInverse();
  auto inv_sqrt = [&](const auto& v) -> Eigen::VectorXd {
    return B_ * inv_d.cwiseProduct(B_.transpose() * v);
  };

  mean_ += k.cm * sigma_ * yw;
  ps_ = (1.0 - k.cs) * ps_ + std::sqrt(k.cs * (2.0 - k.cs) * k.mueff) * inv_sqrt(yw);
  const double chi_n = expected_norm(nd);
  const double ps_norm = ps_.norm();
  const double correction =
      std::sqrt(1.0 - std::pow(1.0 - k.cs, 2.0 * static_cast<double>(generation_ + 1)));
  const bool hsig = ps_norm / correction < (1.4 + 2.0 / (nd + 1.0)) * chi_n;
  pc_ = (1.0 - k.cc) * pc_;
  if (hsig) pc_ += std::sqrt(k.cc * (2.0 - k.cc) * k.mueff) * yw;

  double weight_sum = 0.0;
  for (double w : k.weights) weight_sum += w;
  const double delta_h = hsig ? 0.0 : k.cc * (2.0 - k.cc);
  Eigen::MatrixXd rank_mu = Eigen::MatrixXd::Zero(n, n);
  for (std::size_t i = 0; i < k.lambda; ++i) {
    double w = k.weights[i];
    if (w == 0.0) continue;
    const auto y = Y.col(static_cast<Index>(i));
    // Negative weights are rescaled by n / ||C^{-1/2} y||^2 (tutorial, eq. 46).
    if (w < 0.0) w *= nd / inv_sqrt(y).squaredNorm();
    rank_mu += w * (y * y.transpose());
  }
  C_ = (1.0 + k.c1 * delta_h - k.c1 - k.cmu * weight_sum) * C_ + k.c1 * (pc_ * pc_.transpose()) +
       k.cmu * rank_mu;
  sigma_ *= std::exp((k.cs / k.damps) * (ps_norm / chi_n - 1.0));

  ++generation_;
  evaluations_ += k.lambda;
  // Lazy refresh: every lambda / (c1 + cmu) / n / 10 evaluations (tutorial, Appendix B.2).
  const double gap = static_cast<double>(k.lambda) / (k.c1 + k.cmu) / nd / 10.0;
  if (eager_ || static_cast<double>(evaluations_ - decomposed_at_) > gap) decompose();
}

void CmaEs::decompose() {
  // Enforce symmetry before decomposing (rounding can leave the triangles apart).
  const Eigen::MatrixXd sym = 0.5 * (C_ + C_.transpose());
  C_ = sym;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(C_);
  if (solver.info() != Eigen::Success) {
    D_.setConstant(std::numeric_limits<double>::quiet_NaN());  // reported by stalled()
    return;
  }
  B_ = solver.eigenvectors();
  D_ = solver.eigenvalues().cwiseMax(0.0).cwiseSqrt();
  decomposed_at_ = evaluations_;
}

bool CmaEs::stalled() const {
  if (!std::isfinite(sigma_) || !mean_.allFinite() || !C_.allFinite() || !D_.allFinite())
    return true;
  const double dmax = D_.maxCoeff();
  const double dmin = D_.minCoeff();
  if (!(dmin > 0.0) || (dmax / dmin) * (dmax / dmin) > 1e14) return true;
  const double step = sigma_ * dmax;
  return step < 1e-12 || step > 1e8 * sigma0_;
}

void CmaEs::save(std::vector<double>& out) const {
  auto put = [&](const auto& m) { out.insert(out.end(), m.data(), m.data() + m.size()); };
  out.push_back(static_cast<double>(dimensions()));
  out.push_back(sigma_);
  out.push_back(static_cast<double>(generation_));
  out.push_back(static_cast<double>(evaluations_));
  out.push_back(static_cast<double>(decomposed_at_));
  put(mean_);
  put(pc_);
  put(ps_);
  put(C_);
  put(B_);
  put(D_);
}

void CmaEs::load(std::span<const double> in, std::size_t& pos) {
  const std::size_t n = dimensions();
  const std::size_t need = 5 + 4 * n + 2 * n * n;
  if (pos + need > in.size() || in[pos] != static_cast<double>(n))
    throw std::invalid_argument("CMA-ES state has the wrong size");
  auto take = [&](auto& m) {
    std::copy_n(in.data() + pos, m.size(), m.data());
    pos += static_cast<std::size_t>(m.size());
  };
  sigma_ = in[pos + 1];
  generation_ = static_cast<std::uint64_t>(in[pos + 2]);
  evaluations_ = static_cast<std::uint64_t>(in[pos + 3]);
  decomposed_at_ = static_cast<std::uint64_t>(in[pos + 4]);
  pos += 5;
  take(mean_);
  take(pc_);
  take(ps_);
  take(C_);
  take(B_);
  take(D_);
}

}  // namespace tessera
