#include "core/stats/effect_size.hpp"

#include <algorithm>
#include <cmath>

namespace tessera {

double vargha_delaney_a12(std::span<const double> x, std::span<const double> y) {
  if (x.empty() || y.empty()) return std::nan("");
  // Direct count of the m n pairs: exact, and the samples here are replicated runs (small).
  double wins = 0.0;
  for (double a : x)
    for (double b : y) wins += a > b ? 1.0 : (a == b ? 0.5 : 0.0);
  return wins / (static_cast<double>(x.size()) * static_cast<double>(y.size()));
}

std::string a12_magnitude(double a12) {
  if (std::isnan(a12)) return "";
  // Distance from 0.5 against 0.06 / 0.14 / 0.21; the 1e-12 keeps a value printed as 0.71 (or
  // 0.29, whose distance rounds below 0.21 in binary) on the side the thresholds put it.
  const double d = std::fabs(a12 - 0.5) + 1e-12;
  if (d >= 0.21) return "large";
  if (d >= 0.14) return "medium";
  if (d >= 0.06) return "small";
  return "negligible";
}

}  // namespace tessera
