#include "io/targets_csv.hpp"

#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>

#include "core/base/errors.hpp"

namespace tessera {
namespace {

std::string trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t\r");
  if (b == std::string::npos) return "";
  const auto e = s.find_last_not_of(" \t\r");
  return s.substr(b, e - b + 1);
}

std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> out;
  std::size_t start = 0;
  while (true) {
    const auto comma = line.find(',', start);
    out.push_back(
        trim(line.substr(start, comma == std::string::npos ? std::string::npos : comma - start)));
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return out;
}

bool parse_number(const std::string& field, double& value) {
  const char* begin = field.data();
  const char* end = field.data() + field.size();
  if (begin != end && *begin == '+') ++begin;  // from_chars refuses a leading '+'
  const auto r = std::from_chars(begin, end, value);
  return r.ec == std::errc() && r.ptr == end && begin != end;
}

std::string unquote(const std::string& s) {
  if (s.size() >= 2 && s.front() == '"' && s.back() == '"') return s.substr(1, s.size() - 2);
  return s;
}

}  // namespace

std::vector<std::vector<double>> read_targets_csv(const std::string& path,
                                                  const std::vector<std::string>& names) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec))
    throw InputError(path + ": is a folder, not a targets file");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot read the targets file");
  const std::size_t d = names.size();
  std::vector<std::size_t> column_of(d);  // descriptor i is in field column_of[i]
  for (std::size_t i = 0; i < d; ++i) column_of[i] = i;

  std::vector<std::vector<double>> targets;
  std::string line;
  std::size_t number = 0;
  bool first = true;
  while (std::getline(in, line)) {
    ++number;
    const std::string content = trim(line);
    if (content.empty() || content.front() == '#') continue;
    const auto fields = split(content);
    const std::string where = path + ": line " + std::to_string(number) + ": ";
    if (first) {
      first = false;
      double ignored = 0.0;
      bool numeric = true;
      for (const auto& f : fields) numeric = numeric && parse_number(f, ignored);
      if (!numeric) {
        // A header: match the columns to the descriptors by name.
        std::map<std::string, std::size_t> position;
        for (std::size_t j = 0; j < fields.size(); ++j) {
          const std::string name = unquote(fields[j]);
          if (!position.emplace(name, j).second)
            throw InputError(where + "column '" + name + "' appears twice");
        }
        std::string known;
        for (const auto& n : names) known += (known.empty() ? "" : ", ") + n;
        for (const auto& [name, j] : position) {
          bool found = false;
          for (std::size_t i = 0; i < d; ++i)
            if (names[i] == name) column_of[i] = j, found = true;
          if (!found)
            throw InputError(where + "no descriptor named '" + name + "' (descriptors: " + known +
                             ")");
        }
        if (position.size() != d)
          throw InputError(where + "the header names " + std::to_string(position.size()) +
                           " of the " + std::to_string(d) + " descriptors (" + known + ")");
        continue;
      }
    }
    if (fields.size() != d)
      throw InputError(where + "expected " + std::to_string(d) + " values, found " +
                       std::to_string(fields.size()));
    std::vector<double> target(d);
    for (std::size_t i = 0; i < d; ++i) {
      const std::string& f = fields[column_of[i]];
      if (!parse_number(f, target[i]) || !std::isfinite(target[i]))
        throw InputError(where + "'" + f + "' is not a finite number");
    }
    targets.push_back(std::move(target));
  }
  if (in.bad()) throw InputError(path + ": cannot read the targets file");
  if (targets.empty()) throw InputError(path + ": no targets in the file");
  return targets;
}

}  // namespace tessera
