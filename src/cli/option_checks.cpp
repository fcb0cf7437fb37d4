#include "cli/option_checks.hpp"

#include <limits>
#include <string>

#include "core/base/errors.hpp"

namespace tessera::cli {

void check_evaluations_option(std::int64_t evaluations) {
  if (evaluations < 1)
    throw InputError("--evaluations " + std::to_string(evaluations) +
                     ": must be at least 1 (the total number of evaluations to run)");
}

void check_seed_option(std::int64_t seed) {
  if (seed < 0)
    throw InputError("--seed " + std::to_string(seed) + ": must be an integer from 0 to " +
                     std::to_string(std::numeric_limits<std::int64_t>::max()));
}

}  // namespace tessera::cli
