// The linear-projection benchmarks sphere-proj and rastrigin-proj (README.md "Shipped problems",
// normative; after Fontaine et al., GECCO 2020, parameters from memory). Pure math on the
// standard library and libmvec only, so that tests call exactly the code the plugins run.
// Genomes are evaluated two at a time, one per lane of the vector cosine (common/lane_math.hpp);
// a single genome is paired with itself, so it gives the same bits alone, in either lane, and in
// any chunk of a batch. Each lane sums its parameters in order, as the scalar formula does.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <numbers>
#include <vector>

#include "common/lane_math.hpp"

namespace tessera::projection {

inline constexpr double kBound = 5.12;  // genome in [-5.12, 5.12]^n by default
// Widest genome box of option genome_bound. The published benchmark (Fontaine et al., GECCO
// 2020; Fontaine & Nikolaidis, ICLR 2023; from memory) leaves the genome unbounded; a box wider
// than 5.12 keeps what matters of it: a parameter past 5.12 adds only 5.12 / x to its sum, so
// the extreme descriptors need every parameter exactly at +-5.12, not merely clipped there.
inline constexpr double kWidestBox = 1e6;
inline constexpr double kShift = 2.048;  // the optimum sits at x_i = 2.048
inline constexpr double kFitnessLower = 0.0;
inline constexpr double kFitnessUpper = 100.0;

enum class Kind { kSphere, kRastrigin };

// The objective of two genomes at once (lane 0: x_a, lane 1: x_b), with z = x - 2.048:
// sphere f(z) = sum z_i^2; Rastrigin f(z) = 10 n + sum (z_i^2 - 10 cos 2 pi z_i).
inline lanes::Double2 objective2(Kind kind, const double* x_a, const double* x_b, std::size_t n) {
  if (kind == Kind::kSphere) {
    lanes::Double2 sum = {0.0, 0.0};
    for (std::size_t i = 0; i < n; ++i) {
      const lanes::Double2 z = lanes::pair(x_a[i], x_b[i]) - kShift;
      sum += z * z;
    }
    return sum;
  }
  const double start = 10.0 * static_cast<double>(n);
  lanes::Double2 sum = {start, start};
  for (std::size_t i = 0; i < n; ++i) {
    const lanes::Double2 z = lanes::pair(x_a[i], x_b[i]) - kShift;
    sum += z * z - 10.0 * lanes::cos2(2.0 * std::numbers::pi * z);
  }
  return sum;
}

inline double objective(Kind kind, const double* x, std::size_t n) {
  return objective2(kind, x, x, n)[0];
}
inline double sphere(const double* x, std::size_t n) {
  return objective(Kind::kSphere, x, n);
}
inline double rastrigin(const double* x, std::size_t n) {
  return objective(Kind::kRastrigin, x, n);
}

// f_max = f(-5.12, ..., -5.12): the corner farthest from the shifted optimum (the published
// normalisation, from memory). In a wider genome box a worse point gets fitness 0 (clamped).
inline double objective_max(Kind kind, std::size_t n) {
  std::vector<double> corner(n, -kBound);
  return objective(kind, corner.data(), n);
}

// Clipping rule of the projection: c(x) = x if |x| <= 5.12, else 5.12 / x.
inline double clip(double x) {
  return std::fabs(x) <= kBound ? x : kBound / x;
}

// Sizes of the two halves: d1 sums the first floor(n/2) parameters, d2 the rest.
inline std::size_t first_half(std::size_t n) {
  return n / 2;
}

// Descriptor bounds: each sum of clipped values lies within +-5.12 * (its number of terms).
inline double descriptor_bound(std::size_t n, std::size_t which) {
  const std::size_t terms = which == 0 ? first_half(n) : n - first_half(n);
  return kBound * static_cast<double>(terms);
}

// Fitness 100 (f_max - f) / f_max clamped to [0, 100] of a genome whose objective is f;
// descriptor (d1, d2): the sums of the clipped halves.
inline void finish(const double* x, std::size_t n, double f_max, double f, double& fitness,
                   double* descriptor) {
  fitness = std::clamp(100.0 * (f_max - f) / f_max, kFitnessLower, kFitnessUpper);
  const std::size_t half = first_half(n);
  double d1 = 0.0;
  double d2 = 0.0;
  for (std::size_t i = 0; i < half; ++i) d1 += clip(x[i]);
  for (std::size_t i = half; i < n; ++i) d2 += clip(x[i]);
  descriptor[0] = d1;
  descriptor[1] = d2;
}

// The batch kernel: `count` genomes (row-major, n parameters each), two at a time; an odd last
// genome is paired with itself (padding, never a scalar tail).
inline void evaluate_batch(Kind kind, const double* genomes, std::size_t count, std::size_t n,
                           double f_max, double* fitness, double* descriptors) {
  for (std::size_t k = 0; k < count; k += 2) {
    const std::size_t l = k + 1 < count ? k + 1 : k;
    const lanes::Double2 f = objective2(kind, genomes + k * n, genomes + l * n, n);
    finish(genomes + k * n, n, f_max, f[0], fitness[k], descriptors + 2 * k);
    if (l != k) finish(genomes + l * n, n, f_max, f[1], fitness[l], descriptors + 2 * l);
  }
}

// One genome (the batch kernel's result).
inline void evaluate(Kind kind, const double* x, std::size_t n, double f_max, double& fitness,
                     double* descriptor) {
  evaluate_batch(kind, x, 1, n, f_max, &fitness, descriptor);
}

}  // namespace tessera::projection
