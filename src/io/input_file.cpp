#include "io/input_file.hpp"

#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/base/errors.hpp"

namespace tessera {

std::string read_input_file(const std::string& path, const std::string& kind) {
  namespace fs = std::filesystem;
  std::error_code ec;
  const auto status = fs::status(path, ec);
  if (status.type() == fs::file_type::not_found) throw InputError(path + ": no such " + kind);
  if (status.type() == fs::file_type::directory)
    throw InputError(path + ": is a folder, not a " + kind);
  if (!ec && status.type() != fs::file_type::regular)
    throw InputError(path + ": is not a regular file (a " + kind + " is a TOML file)");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open the " + kind);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

}  // namespace tessera
