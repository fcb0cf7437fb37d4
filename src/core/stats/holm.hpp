// Holm's step-down correction for a family of tests (Holm, "A simple sequentially rejective
// multiple test procedure", Scand. J. Statistics 6, 1979): with the m p-values sorted,
// p_(1) <= ... <= p_(m), the adjusted value of the i-th is max over j <= i of min(1, (m-j+1)
// p_(j)). Rejecting where the adjusted value is below alpha is Holm's procedure at level alpha.
#pragma once

#include <vector>

namespace tessera {

// Adjusted p-values in the input order. NaN entries (tests that could not be made) are left NaN
// and are not members of the family: m counts the finite p-values only.
std::vector<double> holm_adjust(const std::vector<double>& p);

}  // namespace tessera
