#include "io/number_text.hpp"

#include <cmath>
#include <cstdio>

namespace tessera {

std::string figure_text(double value, std::string_view missing) {
  if (std::isnan(value)) return std::string(missing);
  char text[32];
  std::snprintf(text, sizeof text, "%.4g", value);
  return text;
}

std::string p_value_text(double p, std::string_view missing) {
  if (std::isnan(p)) return std::string(missing);
  char text[32];
  // Fixed notation would show a p below 0.001 as 0.0000: the exponent keeps it readable.
  std::snprintf(text, sizeof text, p < 1e-3 ? "%.2e" : "%.4f", p);
  return text;
}

}  // namespace tessera
