#include "problems/registry.hpp"

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <set>
#include <system_error>

#include "core/base/errors.hpp"
#include "problems/plugin_problem.hpp"

namespace tessera {
namespace {

namespace fs = std::filesystem;

// cmake/TesseraPlugin.cmake names every plugin file tessera-plugin-NAME.so.
constexpr std::string_view kPrefix = "tessera-plugin-";
constexpr std::string_view kSuffix = ".so";

bool is_plugin_file_name(const std::string& name) {
  return name.size() > kPrefix.size() + kSuffix.size() && name.starts_with(kPrefix) &&
         name.ends_with(kSuffix);
}

// NAME of tessera-plugin-NAME.so: what a refused file is listed as when it cannot say its name.
std::string name_from_file(const std::string& file) {
  return file.substr(kPrefix.size(), file.size() - kPrefix.size() - kSuffix.size());
}

std::string join(const std::vector<std::string>& items) {
  std::string out;
  for (const auto& item : items) out += (out.empty() ? "" : ", ") + item;
  return out;
}

}  // namespace

std::filesystem::path executable_dir() {
  std::error_code ec;
  const fs::path exe = fs::read_symlink("/proc/self/exe", ec);
  return ec ? fs::path() : exe.parent_path();
}

std::vector<std::string> plugin_search_path() {
  std::vector<std::string> dirs;
  if (const char* env = std::getenv("TESSERA_PLUGIN_PATH")) {
    std::string_view rest(env);
    while (!rest.empty()) {
      const auto colon = rest.find(':');
      const auto item = rest.substr(0, colon);
      if (!item.empty()) dirs.emplace_back(item);
      rest = colon == std::string_view::npos ? std::string_view() : rest.substr(colon + 1);
    }
  }
  if (const fs::path exe = executable_dir(); !exe.empty()) {
    dirs.push_back((exe / "plugins").string());  // build tree
    dirs.push_back((exe / ".." / "lib" / "tessera" / "plugins").lexically_normal().string());
  }
#ifdef TESSERA_PLUGIN_INSTALL_DIR
  dirs.emplace_back(TESSERA_PLUGIN_INSTALL_DIR);
#endif
  // The same folder named twice (a relative and an absolute spelling) is searched once.
  std::vector<std::string> unique;
  std::set<std::string> seen;
  for (const auto& dir : dirs) {
    std::error_code ec;
    fs::path key = fs::weakly_canonical(dir, ec);
    if (ec) key = fs::path(dir).lexically_normal();
    if (seen.insert(key.string()).second) unique.push_back(dir);
  }
  return unique;
}

std::vector<PluginEntry> discover_plugins(std::string_view stop_at) {
  std::vector<PluginEntry> entries;
  std::set<std::string> seen_files;
  std::map<std::string, std::string> provider;  // problem name -> first usable file
  for (const auto& dir : plugin_search_path()) {
    std::error_code ec;
    if (!fs::is_directory(dir, ec)) continue;
    std::vector<fs::path> files;
    for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
      const std::string file = it->path().filename().string();
      std::error_code type_ec;
      if (is_plugin_file_name(file) && fs::is_regular_file(it->path(), type_ec))
        files.push_back(it->path());
    }
    std::sort(files.begin(), files.end());  // a stable order whatever the file system returns
    for (const auto& file : files) {
      std::error_code canon_ec;
      const fs::path canonical = fs::canonical(file, canon_ec);
      if (!seen_files.insert(canon_ec ? file.string() : canonical.string()).second) continue;
      PluginEntry entry;
      entry.path = file.string();
      try {
        const PluginHeader header = inspect_plugin_file(entry.path);
        entry.name = header.name;
        entry.abi_version = header.abi_version;
        const auto [it, fresh] = provider.emplace(entry.name, entry.path);
        if (!fresh)
          entry.error = "problem '" + entry.name + "' is already provided by " + it->second;
      } catch (const InputError& e) {
        entry.name = name_from_file(file.filename().string());
        std::string reason = e.what();
        const std::string prefix = entry.path + ": ";
        if (reason.starts_with(prefix)) reason.erase(0, prefix.size());
        entry.error = reason;
      }
      const bool found = !stop_at.empty() && entry.name == stop_at && entry.error.empty();
      entries.push_back(std::move(entry));
      if (found) return entries;
    }
  }
  return entries;
}

std::shared_ptr<Problem> open_plugin_problem(const std::string& name,
                                             const std::string& options_toml) {
  const auto entries = discover_plugins(name);
  for (const auto& entry : entries)
    if (entry.name == name && entry.error.empty())
      return load_plugin_problem(entry.path, options_toml);
  // No usable file provides the name: a refused one that would is the likely culprit.
  for (const auto& entry : entries)
    if (entry.name == name) throw InputError(entry.path + ": " + entry.error);
  std::vector<std::string> available;
  for (const auto& entry : entries)
    if (entry.error.empty()) available.push_back(entry.name);
  std::sort(available.begin(), available.end());
  if (available.empty())
    throw InputError("no problem named '" + name + "': no plugins found in " +
                     join(plugin_search_path()) + " (set TESSERA_PLUGIN_PATH)");
  throw InputError("no problem named '" + name + "'; available: " + join(available));
}

}  // namespace tessera
