// Finds problem plugins. Search order: the folders in TESSERA_PLUGIN_PATH (colon-separated),
// then <folder of the tessera executable>/plugins (build tree), then the install folder
// <prefix>/lib/tessera/plugins. The first plugin providing a name wins.
#pragma once

#include <cstdint>
#include <filesystem>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "problems/problem.hpp"

namespace tessera {

struct PluginEntry {
  std::string name;
  std::string path;
  std::uint32_t abi_version = 0;
  std::string error;  // non-empty when the file was found but refused (reason, one line)
};

// The folder of the running executable (empty when unknown): the build tree and the installed
// layout (../lib/tessera) are found relative to it.
std::filesystem::path executable_dir();
std::vector<std::string> plugin_search_path();
// Every plugin file found on the search path, loadable or not; with `stop_at`, only those up to
// and including the first usable one providing that name (the one a run would open), so that a
// run does not load every other plugin and its libraries on start.
std::vector<PluginEntry> discover_plugins(std::string_view stop_at = {});
// Opens a plugin problem by name with its options (TOML text). Throws InputError naming the
// plugin file and the fault, or listing the available names when none matches.
std::shared_ptr<Problem> open_plugin_problem(const std::string& name,
                                             const std::string& options_toml);

}  // namespace tessera
