// The caution printed with output that may drive real hardware (a gait or a controller sent to
// a robot).
#pragma once

#include <string>

namespace tessera::cli {

inline constexpr const char* kHardwareCaution =
    "caution: before a genome drives real hardware, validate it in simulation first, start at "
    "low power with an emergency stop within reach, and follow your lab's safety rules.";

// Problems whose genomes are robot controllers: the shipped legged gaits and arena controllers,
// and external processes, which may be a robot's own harness.
inline bool may_drive_hardware(const std::string& problem, const std::string& origin) {
  return problem == "gait" || problem == "arena" || origin.rfind("process:", 0) == 0;
}

}  // namespace tessera::cli
