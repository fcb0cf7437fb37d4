// Small number formatters for the terminal: 1,234,567 / 12.3k / 45.6% / 1m23s.
#pragma once

#include <cstdint>
#include <string>

namespace tessera::cli {

std::string with_thousands(std::uint64_t value);
std::string human_rate(double per_second);
std::string percent(double fraction);
std::string short_number(double value);
std::string duration(double seconds);

}  // namespace tessera::cli
