// libFuzzer target: study-file text -> checked study (and the run files it names). The input is
// written to STUDIES/fuzz.toml in a scratch folder whose other entries link to the shipped
// problems/ folder, so that the shipped studies' "../arm.toml" resolve and their run files and
// overrides are checked too. Any input must end in a study or an InputError (one line).
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/base/errors.hpp"
#include "io/study_file.hpp"

namespace fs = std::filesystem;

namespace {

std::string make_scratch() {
  const fs::path scratch =
      fs::temp_directory_path() / ("tessera-fuzz-study-" + std::to_string(::getpid()));
  fs::create_directories(scratch / "studies");
  for (const auto& entry : fs::directory_iterator(fs::path(TESSERA_SOURCE_DIR) / "problems")) {
    const fs::path link = scratch / entry.path().filename();
    if (entry.path().filename() != "studies" && !fs::exists(fs::symlink_status(link)))
      fs::create_symlink(entry.path(), link);
  }
  return (scratch / "studies" / "fuzz.toml").string();
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const std::string path = make_scratch();
  {
    std::ofstream out(path, std::ios::binary | std::ios::trunc);
    out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  }
  try {
    tessera::load_study_file(path);
  } catch (const tessera::InputError&) {
  }
  return 0;
}
