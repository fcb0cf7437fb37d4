#include "core/models/adaptation.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <stdexcept>

namespace tessera {
namespace {

std::string number(double v) {
  std::ostringstream out;
  out.precision(6);
  out << v;
  return out.str();
}

}  // namespace

void check_adapt_settings(const AdaptSettings& s) {
  if (!std::isfinite(s.kappa) || !(s.kappa >= 0.0))
    throw std::invalid_argument("kappa must be a number >= 0");
  if (!std::isfinite(s.stop_gap) || !(s.stop_gap >= 0.0) || s.stop_gap > 1.0)
    throw std::invalid_argument("the stop gap must be in [0, 1]");
  if (s.good_enough && !std::isfinite(*s.good_enough))
    throw std::invalid_argument("the good-enough level must be a finite number");
  if (s.max_trials < 1) throw std::invalid_argument("the trial budget must be at least 1");
  check_gp_settings(s.gp);
}

std::vector<double> normalise_descriptors(std::span<const double> descriptors,
                                          std::span<const double> lower,
                                          std::span<const double> upper) {
  const std::size_t d = lower.size();
  if (d == 0 || upper.size() != d || descriptors.size() % d != 0)
    throw std::invalid_argument("descriptors and bounds disagree in dimension");
  std::vector<double> out(descriptors.size());
  for (std::size_t i = 0; i < descriptors.size(); ++i) {
    const std::size_t k = i % d;
    out[i] = (descriptors[i] - lower[k]) / (upper[k] - lower[k]);
  }
  return out;
}

TrialAndError::TrialAndError(std::span<const double> points, std::size_t dims,
                             std::span<const double> prior, AdaptSettings settings)
    : points_(points.begin(), points.end()),
      dims_(dims),
      prior_(prior.begin(), prior.end()),
      settings_(settings),
      gp_(dims, settings.gp),
      tried_(prior.size(), 0) {
  check_adapt_settings(settings_);
  if (prior_.empty()) throw std::invalid_argument("the map holds no elites to try");
  if (points_.size() != prior_.size() * dims_)
    throw std::invalid_argument("elite descriptors and prior means disagree in count");
  for (double p : prior_)
    if (!std::isfinite(p)) throw std::invalid_argument("a prior mean is not finite");
  const auto [lowest, highest] = std::minmax_element(prior_.begin(), prior_.end());
  expected_best_ = *highest;
  expected_span_ = *highest - *lowest;
  gp_.set_queries(points_, prior_);
}

double TrialAndError::posterior_sigma(std::size_t elite) const {
  return std::sqrt(gp_.query_variance(elite));
}

double TrialAndError::max_posterior_mean() const {
  double best = -std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < prior_.size(); ++i) best = std::max(best, gp_.query_mean(i));
  return best;
}

std::optional<std::size_t> TrialAndError::best_trial() const {
  std::optional<std::size_t> best;
  for (std::size_t t = 0; t < trials_.size(); ++t)
    if (!best || trials_[t].measured > trials_[*best].measured) best = t;
  return best;
}

bool TrialAndError::criterion_met() const {
  const auto best = best_trial();
  if (!best) return false;
  const double measured = trials_[*best].measured;
  return measured >= stop_level() || (settings_.good_enough && measured >= *settings_.good_enough);
}

std::optional<std::size_t> TrialAndError::next() const {
  if (!aborted_.empty() || trials_.size() >= settings_.max_trials || criterion_met())
    return std::nullopt;
  // Upper confidence bound over the elites not tried yet; the first index wins ties, so the
  // choice is deterministic.
  std::optional<std::size_t> choice;
  double best = -std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < prior_.size(); ++i) {
    if (tried_[i]) continue;
    const double ucb = gp_.query_mean(i) + settings_.kappa * posterior_sigma(i);
    if (!choice || ucb > best) {
      best = ucb;
      choice = i;
    }
  }
  return choice;
}

void TrialAndError::record(std::size_t elite, double measured, bool valid) {
  if (elite >= prior_.size()) throw std::invalid_argument("trial of an elite that does not exist");
  if (!std::isfinite(measured)) throw std::invalid_argument("measured performance is not finite");
  AdaptTrial trial;
  trial.elite = elite;
  trial.prior = prior_[elite];
  trial.predicted = gp_.query_mean(elite);
  trial.sigma = posterior_sigma(elite);
  trial.measured = measured;
  trial.valid = valid;
  gp_.add({points_.data() + elite * dims_, dims_}, measured, prior_[elite]);
  tried_[elite] = 1;
  trials_.push_back(trial);
}

std::string TrialAndError::stop_reason() const {
  if (!aborted_.empty()) return aborted_;
  const std::string after =
      " after " + std::to_string(trials_.size()) + " trial" + (trials_.size() == 1 ? "" : "s");
  if (criterion_met()) {
    const double best = trials_[*best_trial()].measured;
    if (best >= stop_level())
      return "best measured " + number(best) + " is within " +
             number(settings_.stop_gap * expected_span_) + " (stop gap " +
             number(settings_.stop_gap) + " of the map's span " + number(expected_span_) +
             ") of the map's best expectation " + number(expected_best_) + after;
    return "best measured " + number(best) + " reached the good-enough level " +
           number(*settings_.good_enough) + after;
  }
  if (trials_.size() >= settings_.max_trials)
    return "trial budget of " + std::to_string(settings_.max_trials) + " spent";
  if (!next()) return "every elite of the map was tried";
  return "";
}

void run_trial_and_error(TrialAndError& loop, const TrialFunction& trial,
                         const TrialObserver& observer) {
  while (const auto elite = loop.next()) {
    const auto measured = trial(*elite);
    if (!measured) {
      loop.abort("no measurement for the trial of elite " + std::to_string(*elite));
      break;
    }
    loop.record(*elite, *measured);
    if (observer) observer(loop.trials().back(), loop);
  }
}

}  // namespace tessera
