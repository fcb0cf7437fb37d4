// Short text for the figures and p-values people read in tables (compare's text output and the
// comparison report): four significant digits, p-values in fixed notation down to 0.001 and in
// scientific notation below. A missing value (NaN) is written as the caller's marker, which
// differs between plain text and HTML.
#pragma once

#include <string>
#include <string_view>

namespace tessera {

// printf "%.4g"; NaN -> `missing`.
std::string figure_text(double value, std::string_view missing);

// printf "%.4f" from 0.001 up, "%.2e" below; NaN -> `missing`.
std::string p_value_text(double p, std::string_view missing);

}  // namespace tessera
