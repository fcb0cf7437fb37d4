// Writes a deterministic sample archive (tests/support/sample_snapshot.hpp) for the script tests
// that check files with outside readers (h5py) and `tessera inspect`.
// Usage: write_sample_archive KIND PATH [ELITES [GENOME [HISTORY [SALT]]]] [--no-resume]
//        [--extras=E] [--novelty-archive=M]
#include <cstdlib>
#include <exception>
#include <iostream>
#include <string>
#include <vector>

#include "io/archive_file.hpp"
#include "support/sample_snapshot.hpp"

int main(int argc, char** argv) {
  std::vector<std::string> args;
  tessera::testing::SampleOptions o;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--no-resume")
      o.resume = false;
    else if (a.rfind("--extras=", 0) == 0)
      o.extras = std::stoul(a.substr(9));
    else if (a.rfind("--novelty-archive=", 0) == 0)
      o.novelty_archive = std::stoul(a.substr(18));
    else
      args.push_back(a);
  }
  if (args.size() < 2 || args.size() > 6) {
    std::cerr << "usage: write_sample_archive KIND PATH [ELITES [GENOME [HISTORY [SALT]]]] "
                 "[--no-resume] [--extras=E] [--novelty-archive=M]\n";
    return 2;
  }
  o.kind = args[0];
  if (args.size() > 2) o.elites = std::stoul(args[2]);
  if (args.size() > 3) o.genome = std::stoul(args[3]);
  if (args.size() > 4) o.history = std::stoul(args[4]);
  if (args.size() > 5) o.salt = std::stoull(args[5]);
  try {
    tessera::write_archive_file(args[1], tessera::testing::sample_snapshot(o));
  } catch (const std::exception& e) {
    std::cerr << "write_sample_archive: " << e.what() << "\n";
    return 1;
  }
  return 0;
}
