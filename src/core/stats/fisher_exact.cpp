#include "core/stats/fisher_exact.hpp"

#include <algorithm>
#include <vector>

namespace tessera {

double fisher_exact_p(std::uint64_t a, std::uint64_t b, std::uint64_t c, std::uint64_t d) {
  const std::uint64_t row1 = a + b, row2 = c + d, col1 = a + c, col2 = b + d;
  if (row1 == 0 || row2 == 0 || col1 == 0 || col2 == 0) return 1.0;
  // x = the top-left cell, hypergeometric over [lo, hi] with the margins fixed.
  const std::uint64_t lo = col1 > row2 ? col1 - row2 : 0;
  const std::uint64_t hi = std::min(row1, col1);
  // Unnormalised probabilities by the ratio of neighbours, P(x+1)/P(x) =
  // (row1 - x)(col1 - x) / ((x + 1)(row2 - col1 + x + 1)), started at 1 at the mode and walked
  // outwards so that no term overflows and every term keeps full relative precision.
  const auto ratio = [&](std::uint64_t x) {
    return static_cast<double>(row1 - x) * static_cast<double>(col1 - x) /
           (static_cast<double>(x + 1) * static_cast<double>(row2 + x + 1 - col1));
  };
  std::uint64_t mode = static_cast<std::uint64_t>((static_cast<double>(col1) + 1.0) *
                                                  (static_cast<double>(row1) + 1.0) /
                                                  (static_cast<double>(row1 + row2) + 2.0));
  mode = std::clamp(mode, lo, hi);
  std::vector<double> w(hi - lo + 1, 0.0);
  w[mode - lo] = 1.0;
  for (std::uint64_t x = mode; x < hi; ++x) w[x + 1 - lo] = w[x - lo] * ratio(x);
  for (std::uint64_t x = mode; x > lo; --x) w[x - 1 - lo] = w[x - lo] / ratio(x - 1);
  double total = 0.0;
  for (double v : w) total += v;
  const double observed = w[a - lo];
  const double gamma = 1.0 + 1e-14;
  double tail = 0.0;
  for (double v : w)
    if (v <= observed * gamma) tail += v;
  return std::min(1.0, tail / total);
}

}  // namespace tessera
