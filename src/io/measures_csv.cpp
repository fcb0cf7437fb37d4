#include "io/measures_csv.hpp"

#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/base/errors.hpp"
#include "io/table_output.hpp"
#include "io/temporary_files.hpp"

namespace tessera {
namespace {

const char* kHeader = "group,run,measure,value,censored";

std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\r\n") == std::string::npos) return s;
  std::string out = "\"";
  for (char c : s) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

// Splits one line into RFC 4180 fields; false on an unterminated quote.
bool split_fields(const std::string& line, std::vector<std::string>& fields) {
  fields.clear();
  std::string field;
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        field += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      fields.push_back(field);
      field.clear();
    } else {
      field += c;
    }
  }
  fields.push_back(field);
  return !quoted;
}

}  // namespace

void write_measures_csv(const std::string& path, const std::vector<Observation>& rows) {
  std::ostringstream text;
  text << kHeader << "\n";
  for (const Observation& o : rows) {
    text << csv_field(o.group) << "," << csv_field(o.run) << "," << csv_field(o.measure) << ","
         << (o.value && std::isfinite(*o.value) ? exact_number(*o.value) : std::string()) << ","
         << (o.censored ? 1 : 0) << "\n";
  }
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path temp = temporary_path(target);
  remove_stale_temporaries(target);  // left by a study killed while writing the file
  {
    std::ofstream out(temp, std::ios::binary | std::ios::trunc);
    out << text.str();
    out.flush();
    if (!out) {
      std::error_code ec;
      fs::remove(temp, ec);
      throw InputError(path + ": cannot write the measures file");
    }
  }
  std::error_code ec;
  fs::rename(temp, target, ec);
  if (ec) {
    fs::remove(temp, ec);
    throw InputError(path + ": cannot write the measures file: " + ec.message());
  }
}

std::vector<Observation> read_measures_csv(const std::string& path) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec))
    throw InputError(path + ": is a folder, not a measures file");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot read the measures file");
  std::string line;
  std::size_t number = 0;
  std::vector<std::string> fields;
  std::vector<Observation> rows;
  bool header_seen = false;
  while (std::getline(in, line)) {
    ++number;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line.empty()) continue;
    const std::string where = path + ": line " + std::to_string(number) + ": ";
    if (!header_seen) {
      if (line != kHeader)
        throw InputError(where + "the header must be '" + std::string(kHeader) + "'");
      header_seen = true;
      continue;
    }
    if (!split_fields(line, fields)) throw InputError(where + "unterminated quote");
    if (fields.size() != 5)
      throw InputError(where + std::to_string(fields.size()) + " fields, expected 5");
    Observation o;
    o.group = fields[0];
    o.run = fields[1];
    o.measure = fields[2];
    if (o.group.empty() || o.run.empty() || o.measure.empty())
      throw InputError(where + "empty group, run or measure");
    if (!fields[3].empty()) {
      double v = 0.0;
      const char* b = fields[3].data();
      const char* e = b + fields[3].size();
      const auto r = std::from_chars(b, e, v);
      if (r.ec != std::errc() || r.ptr != e || !std::isfinite(v))
        throw InputError(where + "value '" + fields[3] + "' is not a finite number");
      o.value = v;
    }
    if (fields[4] == "1")
      o.censored = true;
    else if (fields[4] != "0")
      throw InputError(where + "censored must be 0 or 1, not '" + fields[4] + "'");
    rows.push_back(std::move(o));
  }
  if (!header_seen) throw InputError(path + ": empty measures file");
  return rows;
}

}  // namespace tessera
