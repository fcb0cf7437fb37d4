// The counter-keyed random streams: distributions and independence of keys.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <vector>

#include "core/base/rng.hpp"

using namespace tessera;

namespace {

// One-sample Kolmogorov-Smirnov statistic of sorted samples against a CDF.
template <class Cdf>
double ks_statistic(std::vector<double> x, Cdf cdf) {
  std::sort(x.begin(), x.end());
  const double n = static_cast<double>(x.size());
  double d = 0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double f = cdf(x[i]);
    d = std::max({d, (static_cast<double>(i) + 1) / n - f, f - static_cast<double>(i) / n});
  }
  return d;
}

}  // namespace

TEST_CASE("normal deviates follow the standard normal distribution") {
  // Kolmogorov-Smirnov at the 1% level: critical value 1.628 / sqrt(n) for large n (Massey,
  // J. American Statistical Association 1951, table 1).
  std::vector<double> x;
  for (std::uint64_t key = 0; key < 2000; ++key) {
    Rng rng(42, key);
    for (int i = 0; i < 10; ++i) x.push_back(rng.normal());
  }
  const double n = static_cast<double>(x.size());
  const double d = ks_statistic(x, [](double v) { return 0.5 * std::erfc(-v / std::sqrt(2.0)); });
  CHECK(d < 1.628 / std::sqrt(n));
  double mean = 0, var = 0;
  for (double v : x) mean += v / n;
  for (double v : x) var += (v - mean) * (v - mean) / n;
  CHECK(std::fabs(mean) < 4.0 / std::sqrt(n));  // four standard errors
  CHECK(std::fabs(var - 1.0) < 4.0 * std::sqrt(2.0 / n));
  // And the test can fail: uniform deviates are far from normal.
  std::vector<double> u;
  Rng rng(1, 1);
  for (int i = 0; i < 20000; ++i) u.push_back(rng.uniform(-2, 2));
  CHECK(ks_statistic(u, [](double v) { return 0.5 * std::erfc(-v / std::sqrt(2.0)); }) >
        1.628 / std::sqrt(20000.0));
}

TEST_CASE("uniform deviates and below(n) are uniform") {
  // Chi-square with 9 degrees of freedom: 21.67 is the 1% critical value (standard tables,
  // e.g. Abramowitz & Stegun, table 26.8).
  std::vector<double> counts(10, 0.0);
  Rng rng(7, 3);
  const int n = 100000;
  for (int i = 0; i < n; ++i) counts[rng.below(10)] += 1;
  double chi2 = 0;
  for (double c : counts) chi2 += (c - n / 10.0) * (c - n / 10.0) / (n / 10.0);
  CHECK(chi2 < 21.67);
  std::vector<double> x;
  for (int i = 0; i < 20000; ++i) x.push_back(rng.uniform());
  CHECK(ks_statistic(x, [](double v) { return std::clamp(v, 0.0, 1.0); }) < 1.628 / std::sqrt(20000.0));
}

TEST_CASE("streams are fixed by their keys and differ between keys") {
  Rng a(5, 1, 2, 3), b(5, 1, 2, 3), c(5, 1, 2, 4), d(6, 1, 2, 3);
  for (int i = 0; i < 100; ++i) {
    const auto va = a.next();
    CHECK(va == b.next());
    CHECK(va != c.next());
    CHECK(va != d.next());
  }
}
