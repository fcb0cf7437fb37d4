#include "core/stats/mann_whitney.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <stdexcept>
#include <vector>

namespace tessera {

void average_ranks(std::span<const double> values, std::span<double> ranks) {
  const std::size_t n = values.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return values[a] < values[b]; });
  std::size_t i = 0;
  while (i < n) {
    std::size_t j = i + 1;
    while (j < n && values[order[j]] == values[order[i]]) ++j;
    // Ranks i+1 .. j share their mean.
    const double rank = 0.5 * static_cast<double>(i + 1 + j);
    for (std::size_t k = i; k < j; ++k) ranks[order[k]] = rank;
    i = j;
  }
}

namespace {

// Sum of f(m, n, k) for k = 0..k_max (m <= n) and binomial(m + n, m), in exact integers: the
// counts are the coefficients of the Gaussian binomial [m+n choose m]_q, built as
// prod_{i=1..m} (1 - q^(n+i)) / (1 - q^i) and truncated at k_max (both steps only read lower
// powers, so the truncation is exact). O(m k_max); false when binomial(m + n, m) could overflow.
bool exact_tail_integer(std::size_t m, std::size_t n, std::size_t k_max, double& tail,
                        double& total) {
  __int128 binom = 1;
  for (std::size_t i = 1; i <= m; ++i) {
    binom = binom * static_cast<__int128>(n + i) / static_cast<__int128>(i);
    if (binom > static_cast<__int128>(1e36)) return false;
  }
  std::vector<__int128> poly(k_max + 1, 0);
  poly[0] = 1;
  for (std::size_t i = 1; i <= m; ++i) {
    const std::size_t a = n + i;
    if (k_max >= a)
      for (std::size_t k = k_max; k >= a; --k) poly[k] -= poly[k - a];
    for (std::size_t k = i; k <= k_max; ++k) poly[k] += poly[k - i];
  }
  __int128 sum = 0;
  for (const __int128 c : poly) sum += c;
  tail = static_cast<double>(static_cast<long double>(sum));
  total = static_cast<double>(static_cast<long double>(binom));
  return true;
}

// The same by the recurrence of Mann & Whitney in doubles, for sizes beyond the integers above.
void exact_tail_recurrence(std::size_t m, std::size_t n, std::size_t k_max, double& tail,
                           double& total) {
  // counts[j][k] = f(j, c, k) for the current count c of the larger sample; rows j are updated in
  // rising order, so row j - 1 already holds column c. All additions of non-negative numbers: no
  // cancellation even where counts exceed 2^53.
  std::vector<std::vector<double>> counts(m + 1, std::vector<double>(k_max + 1, 0.0));
  for (std::size_t j = 0; j <= m; ++j) counts[j][0] = 1.0;  // f(j, 0, k) = [k == 0]
  for (std::size_t c = 1; c <= n; ++c)
    for (std::size_t j = 1; j <= m; ++j)
      for (std::size_t k = c; k <= k_max; ++k) counts[j][k] += counts[j - 1][k - c];
  tail = 0.0;
  for (std::size_t k = 0; k <= k_max; ++k) tail += counts[m][k];
  total = 1.0;  // binomial(m + n, m)
  for (std::size_t i = 1; i <= m; ++i)
    total = total * static_cast<double>(n + i) / static_cast<double>(i);
}

}  // namespace

double mann_whitney_exact_p(double u, std::size_t m, std::size_t n) {
  // The distribution of U is the same for (m, n) and (n, m).
  if (m > n) std::swap(m, n);
  const double mn = static_cast<double>(m) * static_cast<double>(n);
  const double upper = std::max(u, mn - u);
  // P(U >= upper) = P(U <= mn - upper) by symmetry; sum the counts up to k_max.
  const auto k_max = static_cast<std::size_t>(std::floor(mn - upper));
  double tail = 0.0, total = 1.0;
  if (!exact_tail_integer(m, n, k_max, tail, total))
    exact_tail_recurrence(m, n, k_max, tail, total);
  return std::min(1.0, 2.0 * tail / total);
}

MannWhitneyResult mann_whitney_u(std::span<const double> x, std::span<const double> y) {
  const std::size_t n1 = x.size(), n2 = y.size();
  if (n1 == 0 || n2 == 0) throw std::invalid_argument("mann_whitney_u: empty sample");
  std::vector<double> pooled(x.begin(), x.end());
  pooled.insert(pooled.end(), y.begin(), y.end());
  for (double v : pooled)
    if (std::isnan(v)) throw std::invalid_argument("mann_whitney_u: NaN in a sample");
  const std::size_t n = n1 + n2;
  std::vector<double> ranks(n);
  average_ranks(pooled, ranks);
  double r1 = 0.0;
  for (std::size_t i = 0; i < n1; ++i) r1 += ranks[i];
  const double dn1 = static_cast<double>(n1), dn2 = static_cast<double>(n2);
  MannWhitneyResult result;
  result.u = r1 - dn1 * (dn1 + 1.0) / 2.0;
  const double u_max = std::max(result.u, dn1 * dn2 - result.u);

  // Tie term sum(t^3 - t) over groups of equal values.
  std::vector<double> sorted = pooled;
  std::sort(sorted.begin(), sorted.end());
  double tie_term = 0.0;
  bool ties = false;
  for (std::size_t i = 0; i < n;) {
    std::size_t j = i + 1;
    while (j < n && sorted[j] == sorted[i]) ++j;
    const double t = static_cast<double>(j - i);
    if (j - i > 1) ties = true;
    tie_term += t * t * t - t;
    i = j;
  }
  // scipy's rule: asymptotic when both samples have more than 8 values or there are ties.
  const bool exact = !(n1 > 8 && n2 > 8) && !ties;
  if (exact) {
    result.method = MannWhitneyMethod::exact;
    result.p = mann_whitney_exact_p(result.u, n1, n2);
    return result;
  }
  result.method = MannWhitneyMethod::asymptotic;
  const double dn = static_cast<double>(n);
  const double s = std::sqrt(dn1 * dn2 / 12.0 * ((dn + 1.0) - tie_term / (dn * (dn - 1.0))));
  const double numerator = u_max - dn1 * dn2 / 2.0 - 0.5;
  if (!(s > 0.0)) {
    // All values equal: z = -0.5 / 0 = -inf, sf = 1, doubled and clipped to 1.
    result.p = 1.0;
    return result;
  }
  const double z = numerator / s;
  // 2 * sf(z) of the standard normal = erfc(z / sqrt 2).
  result.p = std::min(1.0, std::erfc(z / std::sqrt(2.0)));
  return result;
}

}  // namespace tessera
