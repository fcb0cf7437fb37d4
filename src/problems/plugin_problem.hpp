// A Problem backed by a plugin shared library speaking the C ABI of include/tessera/plugin.h.
// Loading validates the file (symbols, ABI version, metadata) and refuses it with an InputError
// "<plugin path>: <fault>".
#pragma once

#include <cstdint>
#include <memory>
#include <string>

#include "problems/problem.hpp"

namespace tessera {

// What a plugin file says about itself before any instance exists.
struct PluginHeader {
  std::string name;               // tsr_problem_name()
  std::uint32_t abi_version = 0;  // tsr_abi_version()
};

// Opens the file, checks that every required tsr_ symbol is present and that the ABI version is
// one this tessera loads (1 or 2; tsr_scene and tsr_trace are optional in version 2), and
// returns its problem name. Throws InputError "<path>: <fault>".
PluginHeader inspect_plugin_file(const std::string& path);

// Loads the plugin file and creates a first instance with the options (TOML text) to read and
// check its metadata. Throws InputError "<path>: <fault>" when the file is refused or rejects the
// options.
std::shared_ptr<Problem> load_plugin_problem(const std::string& path,
                                             const std::string& options_toml);

}  // namespace tessera
