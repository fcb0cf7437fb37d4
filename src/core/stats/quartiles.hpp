// Median and quartiles of a sample, with the linear interpolation between order statistics that
// Hyndman & Fan (The American Statistician, 1996) call definition 7, the default of numpy's
// percentile and of R's quantile: for sorted x_0..x_{n-1}, q(p) = x_i + f (x_{i+1} - x_i) with
// h = (n - 1) p, i = floor(h), f = h - i.
#pragma once

#include <span>

namespace tessera {

// p in [0, 1]; NaN for an empty sample. The values need not be sorted.
double quantile(std::span<const double> values, double p);

struct Quartiles {
  double q1 = 0.0;
  double median = 0.0;
  double q3 = 0.0;
};

Quartiles quartiles(std::span<const double> values);

}  // namespace tessera
