// Checks of command-line values shared by several commands: the message names the option and
// the value typed, not the run file the value would override.
#pragma once

#include <cstdint>
#include <string>

namespace tessera::cli {

// --evaluations N: at least 1 (0 would otherwise fall back to the run file's budget).
void check_evaluations_option(std::int64_t evaluations);

// --seed S: the value typed, 0 to the largest integer a run file can hold (TOML integers are signed
// 64-bit).
std::int64_t parse_seed_option(const std::string& text);

}  // namespace tessera::cli
