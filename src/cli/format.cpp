#include "cli/format.hpp"

#include <cmath>
#include <cstdio>

namespace tessera::cli {

std::string with_thousands(std::uint64_t value) {
  std::string digits = std::to_string(value);
  std::string out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out += ',';
    out += digits[i];
  }
  return out;
}

std::string human_rate(double per_second) {
  char buf[32];
  if (per_second >= 1e6) std::snprintf(buf, sizeof buf, "%.2fM", per_second / 1e6);
  else if (per_second >= 1e3) std::snprintf(buf, sizeof buf, "%.1fk", per_second / 1e3);
  else std::snprintf(buf, sizeof buf, "%.1f", per_second);
  return buf;
}

std::string percent(double fraction) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f%%", 100.0 * fraction);
  return buf;
}

std::string short_number(double value) {
  char buf[32];
  if (!std::isfinite(value)) return "-";
  if (value != 0 && (std::fabs(value) >= 1e5 || std::fabs(value) < 1e-3))
    std::snprintf(buf, sizeof buf, "%.3g", value);
  else
    std::snprintf(buf, sizeof buf, "%.4g", value);
  return buf;
}

std::string duration(double seconds) {
  char buf[32];
  if (!std::isfinite(seconds) || seconds < 0) return "-";
  // Milliseconds under a second and tenths under ten: a quick run would otherwise read "in 0s"
  // beside its rate.
  if (seconds < 0.9995) {
    std::snprintf(buf, sizeof buf, "%.0fms", seconds * 1000.0);
    return buf;
  }
  if (seconds < 9.95) {
    std::snprintf(buf, sizeof buf, "%.1fs", seconds);
    return buf;
  }
  const auto s = static_cast<long long>(seconds + 0.5);
  if (s >= 3600) std::snprintf(buf, sizeof buf, "%lldh%02lldm", s / 3600, (s / 60) % 60);
  else if (s >= 60) std::snprintf(buf, sizeof buf, "%lldm%02llds", s / 60, s % 60);
  else std::snprintf(buf, sizeof buf, "%llds", s);
  return buf;
}

}  // namespace tessera::cli
