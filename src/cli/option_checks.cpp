#include "cli/option_checks.hpp"

#include <charconv>
#include <limits>
#include <string>
#include <system_error>

#include "core/base/errors.hpp"

namespace tessera::cli {

void check_evaluations_option(std::int64_t evaluations) {
  if (evaluations < 1)
    throw InputError("--evaluations " + std::to_string(evaluations) +
                     ": must be at least 1 (the total number of evaluations to run)");
}

std::int64_t parse_seed_option(const std::string& text) {
  // Parsed here rather than by the option library, which saturates values past 2^63 - 1.
  std::int64_t seed = 0;
  const char* end = text.data() + text.size();
  const auto [ptr, ec] = std::from_chars(text.data(), end, seed);
  if (ec != std::errc() || ptr != end || seed < 0)
    throw InputError("--seed " + text + ": must be an integer from 0 to " +
                     std::to_string(std::numeric_limits<std::int64_t>::max()));
  return seed;
}

}  // namespace tessera::cli
