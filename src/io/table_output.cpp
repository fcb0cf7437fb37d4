#include "io/table_output.hpp"

#include <algorithm>
#include <charconv>
#include <cstdio>
#include <stdexcept>

namespace tessera {

std::string exact_number(double value) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, value);
  return std::string(buf, r.ptr);
}

namespace {

std::string short_text(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

std::string text_cell(const TableValue& value, const TableColumn& column) {
  if (const auto* i = std::get_if<std::int64_t>(&value)) return std::to_string(*i);
  if (const auto* d = std::get_if<double>(&value)) return short_text(*d);
  if (const auto* s = std::get_if<std::string>(&value)) return *s;
  const auto& v = std::get<std::vector<double>>(value);
  std::string out = "(";
  const std::size_t shown = std::min(v.size(), column.text_items);
  for (std::size_t i = 0; i < shown; ++i) out += (i ? ", " : "") + short_text(v[i]);
  if (shown < v.size()) out += ", +" + std::to_string(v.size() - shown) + " more";
  return out + ")";
}

// RFC 4180: quote a field holding a comma, quote or line break; double the quotes inside.
std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\r\n") == std::string::npos) return s;
  std::string out = "\"";
  for (char c : s) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

}  // namespace

void write_table_text(std::ostream& out, const Table& t) {
  std::vector<std::vector<std::string>> cells;
  std::vector<std::size_t> widths;
  for (const auto& c : t.columns) widths.push_back(c.name.size());
  for (const auto& row : t.rows) {
    auto& line = cells.emplace_back();
    for (std::size_t j = 0; j < t.columns.size(); ++j) {
      line.push_back(text_cell(row[j], t.columns[j]));
      widths[j] = std::max(widths[j], line.back().size());
    }
  }
  const auto print = [&](const std::vector<std::string>& line) {
    std::string s;
    for (std::size_t j = 0; j < line.size(); ++j) {
      s += line[j];
      if (j + 1 < line.size()) s += std::string(widths[j] - line[j].size() + 2, ' ');
    }
    out << s << "\n";
  };
  std::vector<std::string> header;
  for (const auto& c : t.columns) header.push_back(c.name);
  print(header);
  for (const auto& line : cells) print(line);
}

void write_table_json(std::ostream& out, const Table& t) {
  // Keys keep the order of the columns, so the document reads like the table.
  nlohmann::ordered_json doc = t.header.is_object() ? t.header : nlohmann::ordered_json::object();
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const auto& row : t.rows) {
    nlohmann::ordered_json item = nlohmann::ordered_json::object();
    for (std::size_t j = 0; j < t.columns.size(); ++j)
      std::visit([&](const auto& v) { item[t.columns[j].name] = v; }, row[j]);
    list.push_back(std::move(item));
  }
  doc[t.list_key] = std::move(list);
  out << doc.dump(2) << "\n";
}

void write_table_csv(std::ostream& out, const Table& t) {
  std::vector<std::string> names;
  for (const auto& c : t.columns) {
    if (c.parts.empty()) names.push_back(csv_field(c.name));
    for (const auto& p : c.parts) names.push_back(csv_field(c.name + "." + p));
  }
  std::string header;
  for (std::size_t k = 0; k < names.size(); ++k) {
    if (k) header += ',';
    header += names[k];
  }
  out << header << "\n";
  for (const auto& row : t.rows) {
    std::vector<std::string> fields;
    for (std::size_t j = 0; j < t.columns.size(); ++j) {
      const auto& v = row[j];
      if (const auto* i = std::get_if<std::int64_t>(&v)) {
        fields.push_back(std::to_string(*i));
      } else if (const auto* d = std::get_if<double>(&v)) {
        fields.push_back(exact_number(*d));
      } else if (const auto* s = std::get_if<std::string>(&v)) {
        fields.push_back(csv_field(*s));
      } else {
        const auto& vec = std::get<std::vector<double>>(v);
        if (vec.size() != t.columns[j].parts.size())
          throw std::logic_error("table: column " + t.columns[j].name + " has " +
                                 std::to_string(vec.size()) + " values, header names " +
                                 std::to_string(t.columns[j].parts.size()));
        for (double x : vec) fields.push_back(exact_number(x));
      }
    }
    std::string line;
    for (std::size_t k = 0; k < fields.size(); ++k) {
      if (k) line += ',';
      line += fields[k];
    }
    out << line << "\n";
  }
}

void write_table(std::ostream& out, const Table& t, std::string_view format) {
  if (format == "json")
    write_table_json(out, t);
  else if (format == "csv")
    write_table_csv(out, t);
  else if (format == "text")
    write_table_text(out, t);
  else
    throw std::invalid_argument("table: unknown format " + std::string(format));
}

}  // namespace tessera
