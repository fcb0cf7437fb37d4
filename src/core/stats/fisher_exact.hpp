// Fisher's exact test on a 2x2 table, two-sided, with the values of scipy.stats.fisher_exact
// (scipy 1.10): the p-value sums the hypergeometric probabilities of every table with the same
// margins that is at most as likely as the observed one (relative tolerance 1e-14), and is 1
// when a row or a column sums to zero.
#pragma once

#include <cstdint>

namespace tessera {

// Table [[a, b], [c, d]]: rows are the two groups, columns success / failure.
double fisher_exact_p(std::uint64_t a, std::uint64_t b, std::uint64_t c, std::uint64_t d);

}  // namespace tessera
