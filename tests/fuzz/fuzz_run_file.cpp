// libFuzzer target: run-file text -> checked settings. Any input must end in settings or an
// InputError (one line); a crash, hang, leak or sanitizer report is a finding.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/base/errors.hpp"
#include "io/run_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    tessera::parse_run_text(text, "fuzz.toml", "/nonexistent-fuzz-base", {});
  } catch (const tessera::InputError&) {
  }
  return 0;
}
