// libFuzzer target: archive bytes -> HDF5 reader -> snapshot checks. Any input must give a
// snapshot that passes the checks or an InputError naming the fault.
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <string>

#include "core/base/errors.hpp"
#include "io/archive_file.hpp"
#include "io/snapshot_check.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const std::string path = "/tmp/tessera-fuzz-archive-" + std::to_string(::getpid()) + ".h5";
  if (std::FILE* f = std::fopen(path.c_str(), "wb")) {
    std::fwrite(data, 1, size, f);
    std::fclose(f);
  }
  try {
    const tessera::ArchiveSnapshot s = tessera::read_archive_file(path);
    if (tessera::snapshot_fault(s)) __builtin_trap();  // the reader let a fault through
  } catch (const tessera::InputError&) {
  }
  return 0;
}
