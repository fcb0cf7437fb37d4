// Variation operators: make a child genome from one or two parents. Step sizes are fractions of
// each parameter's range, so one setting suits genomes of any scale; children are clipped to the
// genome bounds.
#pragma once

#include <span>

#include "core/base/rng.hpp"
#include "core/base/types.hpp"

namespace tessera {

// Uniform random genome inside the bounds.
void random_genome(const Bounds& bounds, Rng& rng, std::span<double> out);

// child = parent + sigma * range * N(0, I), clipped.
void gaussian_mutation(std::span<const double> parent, const Bounds& bounds, double sigma,
                       Rng& rng, std::span<double> out);

// Iso+LineDD (Vassiliades & Mouret, GECCO 2018):
// child = x + sigma_iso * range * N(0, I) + sigma_line * N(0, 1) * (y - x), clipped.
// The isotropic part explores around x; the directional part moves along the line to another
// elite y, exploiting the correlation between elites. Defaults (from memory): 0.01 and 0.2.
void iso_line_dd(std::span<const double> x, std::span<const double> y, const Bounds& bounds,
                 double sigma_iso, double sigma_line, Rng& rng, std::span<double> out);

}  // namespace tessera
