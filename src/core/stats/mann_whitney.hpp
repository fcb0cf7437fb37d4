// Mann-Whitney U test, two-sided, with the method choice and values of scipy.stats.mannwhitneyu
// (scipy 1.10, method "auto", use_continuity true): the exact null distribution of U when one
// sample has at most 8 values and the pooled values have no ties; otherwise the normal
// approximation with the tie-corrected variance and a continuity correction of 1/2.
#pragma once

#include <span>

namespace tessera {

enum class MannWhitneyMethod { exact, asymptotic };

struct MannWhitneyResult {
  double u = 0.0;  // U of the first sample: pairs (x, y) with x > y, ties counting 1/2
  double p = 1.0;  // two-sided p-value
  MannWhitneyMethod method = MannWhitneyMethod::asymptotic;
};

// Both samples must be non-empty and free of NaN (std::invalid_argument otherwise).
MannWhitneyResult mann_whitney_u(std::span<const double> x, std::span<const double> y);

// Two-sided exact p-value of U for samples of m and n values without ties: twice the probability
// that U >= max(u, m n - u) under the null hypothesis, at most 1 (Mann & Whitney, Ann. Math.
// Statist. 1947: the count of arrangements follows f(m, n, k) = f(m-1, n, k-n) + f(m, n-1, k)).
double mann_whitney_exact_p(double u, std::size_t m, std::size_t n);

// Average ranks (1-based) of the values, ties sharing the mean of their ranks.
void average_ranks(std::span<const double> values, std::span<double> ranks);

}  // namespace tessera
