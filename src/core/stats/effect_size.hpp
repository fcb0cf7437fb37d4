// Vargha-Delaney A12 ("A critique and improvement of the CL common language effect size
// statistics of McGraw and Wong", J. Educ. Behav. Stat. 25(2), 2000): the probability that a
// value drawn from the first group is larger than one drawn from the second, ties counting half.
// 0.5 means no effect; their thresholds on the distance from 0.5 name the magnitude: 0.56 small,
// 0.64 medium, 0.71 large (and symmetrically 0.44, 0.36, 0.29; thresholds from memory).
#pragma once

#include <span>
#include <string>

namespace tessera {

// NaN when either sample is empty.
double vargha_delaney_a12(std::span<const double> x, std::span<const double> y);

// "negligible", "small", "medium" or "large"; "" for NaN.
std::string a12_magnitude(double a12);

}  // namespace tessera
