#include "io/linkage_archive.hpp"

#include <toml++/toml.h>

#include <exception>

#include "core/base/errors.hpp"

namespace tessera {

bool is_linkage_archive(const ArchiveSnapshot& snapshot) {
  return snapshot.problem == kLinkageProblem;
}

linkage::Options stored_linkage_options(const ArchiveSnapshot& snapshot, const std::string& label) {
  if (!is_linkage_archive(snapshot))
    throw InputError(label + ": the archive holds problem '" + snapshot.problem + "', not '" +
                     kLinkageProblem + "'");
  if (snapshot.genome_size() != linkage::kGenomeSize)
    throw InputError(label + ": a linkage genome has " + std::to_string(linkage::kGenomeSize) +
                     " parameters, the archive's has " + std::to_string(snapshot.genome_size()));
  toml::table config;
  try {
    config = toml::parse(snapshot.config);
  } catch (const toml::parse_error& e) {
    throw InputError(label +
                     ": the stored run file is not valid TOML: " + std::string(e.description()));
  }
  const toml::table* options = config["problem"]["options"].as_table();
  try {
    return options ? linkage::read_options(*options) : linkage::read_options("");
  } catch (const std::exception& e) {
    throw InputError(label + ": stored linkage options: " + e.what());
  }
}

linkage::Dimensions elite_dimensions(const ArchiveSnapshot& snapshot, std::size_t row) {
  return linkage::Dimensions::from_genome(snapshot.genome.data() + row * snapshot.genome_size());
}

}  // namespace tessera
