// Recovery after damage by trial and error over a behaviour map, after Cully, Clune, Tarapore &
// Mouret, "Robots that can adapt like animals", Nature 2015: a Gaussian process over the
// descriptor space whose prior mean is what the map predicts for each elite; the next trial is
// the untried elite with the highest upper confidence bound mean + kappa * sigma.
//
// Stopping differs from the published rule (stop once the best trial reaches alpha times the
// highest posterior mean). That rule compares a trial with predictions the trial itself has just
// pulled down: one poor trial lowers the posterior of every elite around it, so it can "reach"
// alpha of a prediction it has lowered, and alpha * m lies on the wrong side of m when m < 0.
// Here the best trial is compared with what the map itself expected of its best elite, in
// fitness units: stop once best measured >= max prior - stop_gap * (max prior - min prior), so
// the same rule holds for a distance walked and for minus a distance to a target; or once it
// reaches the user's absolute good-enough level; or when the trial budget is spent. Trials come
// from a callback, so this file does no I/O.
#pragma once

#include <cstddef>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "core/models/gaussian_process.hpp"

namespace tessera {

// Defaults of the published work, from memory: kappa = 0.05, Matérn 5/2 kernel with length
// scale 0.4 on descriptors normalised to [0, 1], noise 0.001, unit signal variance. The trial
// budget (20) and the stop gap (1% of the map's span of expectations) are ours.
struct AdaptSettings {
  double kappa = 0.05;
  double stop_gap = 0.01;             // share of (max prior - min prior), in [0, 1]
  std::optional<double> good_enough;  // absolute level that ends the trials, fitness units
  std::size_t max_trials = 20;
  GpSettings gp;
};

// Throws std::invalid_argument naming the faulty setting.
void check_adapt_settings(const AdaptSettings& settings);

struct AdaptTrial {
  std::size_t elite = 0;   // index into the map's elites
  double prior = 0.0;      // the map's prediction before any trial
  double predicted = 0.0;  // posterior mean when chosen
  double sigma = 0.0;      // posterior standard deviation when chosen
  double measured = 0.0;   // performance measured on the damaged robot
  bool valid = true;       // false: the trial failed and counts as `measured` all the same
};

// The loop as a state machine, so a caller can print, log or ask between trials.
class TrialAndError {
 public:
  // points: the elites' descriptors normalised to [0, 1], row-major [count * dims];
  // prior: the map's predicted performance of each elite.
  TrialAndError(std::span<const double> points, std::size_t dims, std::span<const double> prior,
                AdaptSettings settings);

  // The elite to try next, or nothing once the loop is over (stopped, budget spent, all tried).
  std::optional<std::size_t> next() const;
  // Records the measured performance of a trial of `elite` (the one next() proposed).
  void record(std::size_t elite, double measured, bool valid = true);
  // Ends the loop early (no trial could be run); `reason` becomes the stop reason.
  void abort(std::string reason) { aborted_ = std::move(reason); }

  bool finished() const { return !next().has_value(); }
  bool criterion_met() const;       // best measured >= stop_level() or >= good_enough
  std::string stop_reason() const;  // one line; "" while running
  double max_posterior_mean() const;
  double expected_best() const { return expected_best_; }  // the highest prior
  double expected_span() const { return expected_span_; }  // highest minus lowest prior
  // The level at which the map's expectation counts as met: expected_best - stop_gap * span.
  double stop_level() const { return expected_best_ - settings_.stop_gap * expected_span_; }
  const std::vector<AdaptTrial>& trials() const { return trials_; }
  std::optional<std::size_t> best_trial() const;  // highest measured, first on ties
  const GaussianProcess& gp() const { return gp_; }
  std::size_t elite_count() const { return prior_.size(); }
  double posterior_mean(std::size_t elite) const { return gp_.query_mean(elite); }
  double posterior_sigma(std::size_t elite) const;
  const AdaptSettings& settings() const { return settings_; }

 private:
  std::vector<double> points_;
  std::size_t dims_;
  std::vector<double> prior_;
  double expected_best_ = 0.0;
  double expected_span_ = 0.0;
  AdaptSettings settings_;
  GaussianProcess gp_;
  std::vector<unsigned char> tried_;
  std::vector<AdaptTrial> trials_;
  std::string aborted_;
};

// Runs the loop to the end: trial(elite) returns the measured performance, or nothing when the
// trial could not be run at all (the loop then stops). `observer` sees each finished trial.
using TrialFunction = std::function<std::optional<double>(std::size_t elite)>;
using TrialObserver = std::function<void(const AdaptTrial&, const TrialAndError&)>;
void run_trial_and_error(TrialAndError& loop, const TrialFunction& trial,
                         const TrialObserver& observer = {});

// Maps descriptors into [0, 1]^D by the box lower..upper (row-major [count * D]).
std::vector<double> normalise_descriptors(std::span<const double> descriptors,
                                          std::span<const double> lower,
                                          std::span<const double> upper);

}  // namespace tessera
