// The statistics of a comparison of groups of runs (treatments) over the long table of
// observations.hpp: per measure and group the sample size, the missing runs and the quartiles;
// every pair of groups tested (Mann-Whitney U, or Fisher's exact test for binary measures), with
// Holm's correction over the pairs of the measure and the Vargha-Delaney A12; and per curve
// measure the median and quartiles of each group at common checkpoints, with the checkpoints at
// which a group differs from a reference group (Holm over the tested checkpoints of that group).
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/stats/observations.hpp"

namespace tessera {

struct ComparisonOptions {
  std::vector<std::string> groups;      // order of the groups; empty: order of first appearance
  std::vector<std::string> measures;    // measures to compare; empty: every measure in the table
  std::string reference;                // reference group of the curves; empty: the first group
  double alpha = 0.05;                  // significance level of the marks and stars
  std::size_t curve_points = 100;       // at most this many checkpoints per curve
  std::size_t tested_checkpoints = 10;  // checkpoints tested against the reference
};

struct GroupSummary {
  std::string group;
  std::size_t n = 0;           // runs with a value
  std::size_t n_missing = 0;   // runs without one (failed or not measured)
  std::size_t n_censored = 0;  // values that are a budget at which the event had not happened
  double median = 0.0, q1 = 0.0, q3 = 0.0;  // NaN when n == 0
  std::size_t successes = 0;                // binary measures: values equal to 1
  std::vector<double> values;               // the values, in table order (for plots)
  std::vector<bool> censored;               // per value
};

struct PairComparison {
  std::string measure, a, b;
  std::size_t n_a = 0, n_b = 0;
  double u = 0.0;         // Mann-Whitney U of a (pairs a > b, ties half); NaN if a sample is empty
  double p = 0.0;         // two-sided; NaN when not testable
  double p_holm = 0.0;    // Holm-adjusted over all pairs of this measure
  double a12 = 0.0;       // P(a > b) + P(a = b) / 2
  std::string magnitude;  // of a12: negligible / small / medium / large
  std::string test;       // "mann-whitney exact", "mann-whitney asymptotic", "fisher exact", ""
};

struct MeasureComparison {
  std::string measure;
  bool binary = false;    // every value 0 or 1 and the measure is a success measure
  bool censored = false;  // some value is censored
  std::vector<GroupSummary> groups;
  std::vector<PairComparison> pairs;  // (0,1), (0,2), ..., (1,2), ... in group order
};

struct CurveGroup {
  std::string group;
  std::vector<std::size_t> n;          // runs with a value at each checkpoint
  std::vector<double> median, q1, q3;  // NaN where n == 0
};

struct CurveMark {
  std::string group;           // differs from the reference at
  std::size_t checkpoint = 0;  // index into CurveComparison::checkpoints
  double p = 0.0, p_holm = 0.0, a12 = 0.0;
};

struct CurveTest {
  std::string group;
  std::size_t checkpoint = 0;
  std::size_t n_group = 0, n_reference = 0;
  double u = 0.0, p = 0.0, p_holm = 0.0, a12 = 0.0;
};

struct CurveComparison {
  std::string measure;
  std::string reference;
  std::vector<std::uint64_t> checkpoints;  // evaluations
  std::vector<CurveGroup> groups;
  std::vector<CurveTest> tests;  // every group against the reference at the tested checkpoints
  std::vector<CurveMark> marks;  // the tests with p_holm < alpha
};

struct ComparisonResult {
  std::vector<std::string> groups;
  std::string reference;
  double alpha = 0.05;
  std::vector<MeasureComparison> measures;
  std::vector<CurveComparison> curves;
};

// True for the measures tested with Fisher's exact test: "success", "success.*" and "*.success".
bool is_success_measure(const std::string& measure);

// Throws std::invalid_argument when an option names a group or measure that is not in the table.
ComparisonResult compare_groups(const ObservationTable& table, const ComparisonOptions& options);

// A run's curve value at `evaluations`: the last recorded value at or before it; none before the
// first record or after the last one (the run did not get there).
std::optional<double> curve_value_at(const std::vector<const CurvePoint*>& run_points,
                                     std::uint64_t evaluations);

}  // namespace tessera
