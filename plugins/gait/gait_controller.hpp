// The open-loop gait controller: one periodic signal per joint with an amplitude, a phase and a
// duty cycle, after the hexapod controller of Cully, Clune, Tarapore & Mouret, Nature 2015 (from
// memory: a square wave of the given duty cycle, shifted by the phase, smoothed by a Gaussian
// kernel, times the amplitude). The sampling (100 points per period), the kernel width and the
// linear interpolation between samples are ours. Pure math on the standard library only.
#pragma once

#include <cmath>
#include <cstddef>
#include <vector>

namespace tessera::gait {

inline constexpr std::size_t kLegs = 6;
inline constexpr std::size_t kJointsPerLeg = 2;                // swing, lift
inline constexpr std::size_t kJoints = kLegs * kJointsPerLeg;  // actuator order
inline constexpr std::size_t kParamsPerJoint = 3;              // amplitude, phase, duty
inline constexpr std::size_t kGenomeSize = kJoints * kParamsPerJoint;
inline constexpr std::size_t kSamples = 100;  // per period
inline constexpr double kKernelSigma = 3.0;   // samples

// One period of the signal in [-amplitude, amplitude], sampled at kSamples points: +1 for the
// share `duty` of the period starting at `phase` (both in [0, 1]), -1 elsewhere, smoothed by a
// circular convolution with a normalised Gaussian (sigma kKernelSigma samples, cut at 3 sigma).
inline std::vector<double> periodic_signal(double amplitude, double phase, double duty) {
  std::vector<double> square(kSamples);
  for (std::size_t k = 0; k < kSamples; ++k) {
    double u = static_cast<double>(k) / static_cast<double>(kSamples) - phase;
    u -= std::floor(u);
    square[k] = u < duty ? 1.0 : -1.0;
  }
  const int half = static_cast<int>(std::ceil(3.0 * kKernelSigma));
  std::vector<double> kernel(static_cast<std::size_t>(2 * half + 1));
  double total = 0.0;
  for (int i = -half; i <= half; ++i) {
    const double w = std::exp(-0.5 * i * i / (kKernelSigma * kKernelSigma));
    kernel[static_cast<std::size_t>(i + half)] = w;
    total += w;
  }
  std::vector<double> out(kSamples);
  const int n = static_cast<int>(kSamples);
  for (int k = 0; k < n; ++k) {
    double sum = 0.0;
    for (int i = -half; i <= half; ++i)
      sum += kernel[static_cast<std::size_t>(i + half)] *
             square[static_cast<std::size_t>(((k + i) % n + n) % n)];
    out[static_cast<std::size_t>(k)] = amplitude * sum / total;
  }
  return out;
}

// The signal at time t (seconds) for a period of `period` seconds, linearly interpolated.
inline double signal_at(const std::vector<double>& table, double t, double period) {
  double u = t / period;
  u -= std::floor(u);
  const double x = u * static_cast<double>(kSamples);
  const std::size_t k = static_cast<std::size_t>(x) % kSamples;
  const double f = x - std::floor(x);
  return table[k] * (1.0 - f) + table[(k + 1) % kSamples] * f;
}

}  // namespace tessera::gait
