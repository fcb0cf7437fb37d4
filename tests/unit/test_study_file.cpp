// The study file reader: what it keeps of the file as written.
#include <unistd.h>
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "io/study_file.hpp"

TEST_CASE("study file: re-adaptation places keep the order written, not the order of names") {
  // TOML 1.0 gives a table no order; the study file is read in the order a person wrote it.
  const std::filesystem::path dir =
      std::filesystem::temp_directory_path() / ("tessera-study-file-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::string run = std::string(TESSERA_SOURCE_DIR) + "/problems/arm.toml";
  const std::string path = (dir / "order.toml").string();
  {
    std::ofstream f(path);
    f << "[study]\nreplicates = 1\n[[treatment]]\nlabel = \"a\"\nrun = \"" << run << "\"\n"
      << "[[measure]]\nkind = \"readapt\"\nname = \"m\"\nthreshold = 0.0\nbudget = 10\n"
      << "places = { zeta = \"" << run << "\", alpha = \"" << run << "\", mid = \"" << run
      << "\" }\n";
  }
  const tessera::StudySpec spec = tessera::load_study_file(path);
  std::filesystem::remove_all(dir);
  REQUIRE(spec.measures.size() == 1);
  CHECK(tessera::measure_names(spec.measures[0]) ==
        std::vector<std::string>{"readapt.m.zeta", "readapt.m.alpha", "readapt.m.mid"});
}
