// The comparison report: a self-contained HTML page (inline SVG and CSS, no scripts, nothing
// fetched) with, per measure, a box plot (or success shares) and its tables, the median curves
// over evaluations, the per-goal chart of censored measure families, and a table of every
// comparison; each chart is also a standalone SVG and PNG file beside the page.
#pragma once

#include <string>
#include <vector>

#include "core/stats/comparison.hpp"
#include "report/html_report.hpp"

namespace tessera {

struct CompareReportSettings {
  std::string title = "Comparison";
  double png_scale = 2.0;  // PNG pixels per SVG pixel
};

// Families of measures drawn per goal: the measures with a censored value or named
// "readapt.*", grouped by the part of the name before the last '.', in table order.
std::vector<std::pair<std::string, std::vector<const MeasureComparison*>>> goal_families(
    const ComparisonResult& result);

// Files in memory: "index.html" first, then the charts as .svg and .png.
std::vector<ReportFile> build_compare_report(const ComparisonResult& result,
                                             const CompareReportSettings& settings);

}  // namespace tessera
