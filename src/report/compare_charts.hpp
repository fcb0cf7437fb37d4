// The charts of the comparison report, each drawn into a Canvas (SVG and PNG from one drawing):
// box plots of a measure with every run as a point and brackets with stars over the pairs that
// differ; success shares for binary measures; median curves over evaluations with interquartile
// bands and marks where a group differs from the reference; and, for a family of censored
// measures (evaluations until each goal), the median per goal with quartile bands.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "core/stats/comparison.hpp"
#include "report/compare_canvas.hpp"

namespace tessera {

// Stars of a Holm-adjusted p-value: "***" < 0.001, "**" < 0.01, "*" < alpha, else "".
std::string significance_stars(double p_holm, double alpha);

// A bracket over the pair of group columns `left` < `right`, drawn `level` steps above the box.
struct Bracket {
  const PairComparison* pair;
  std::size_t left, right, level;
};
// The brackets of the significant pairs: narrowest lowest, pairs whose columns do not meet
// sharing a level, so six groups need a handful of levels rather than one per pair.
std::vector<Bracket> stack_brackets(const MeasureComparison& measure, double alpha);

Canvas box_plot_chart(const MeasureComparison& measure, double alpha);

Canvas curve_chart(const CurveComparison& curve, double alpha);

// `goals` are the measures of one family in goal order (e.g. readapt.goal-1, readapt.goal-2).
Canvas goal_chart(const std::string& family, const std::vector<const MeasureComparison*>& goals);

}  // namespace tessera
