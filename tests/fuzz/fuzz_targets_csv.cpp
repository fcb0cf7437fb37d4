// libFuzzer target: the --targets CSV reader (two descriptor names, as for the arm).
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <string>

#include "core/base/errors.hpp"
#include "io/targets_csv.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const std::string path = "/tmp/tessera-fuzz-targets-" + std::to_string(::getpid()) + ".csv";
  if (std::FILE* f = std::fopen(path.c_str(), "wb")) {
    std::fwrite(data, 1, size, f);
    std::fclose(f);
  }
  try {
    tessera::read_targets_csv(path, {"x", "y"});
  } catch (const tessera::InputError&) {
  }
  return 0;
}
