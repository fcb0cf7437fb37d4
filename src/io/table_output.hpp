// Result tables printed by the selection commands (query, front) in three forms: aligned text for
// people, one JSON document and CSV for tools. A column holds integers, numbers, text, or a vector
// of numbers (expanded to one CSV column per entry, NAME.PART).
#pragma once

#include <cstddef>
#include <cstdint>
#include <limits>
#include <ostream>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include <nlohmann/json.hpp>

namespace tessera {

using TableValue = std::variant<std::int64_t, double, std::string, std::vector<double>>;

struct TableColumn {
  std::string name;
  std::vector<std::string> parts;  // vector columns: a name for each entry (CSV header)
  std::size_t text_items = std::numeric_limits<std::size_t>::max();  // entries shown in text
};

struct Table {
  std::string list_key;  // JSON: {"<list_key>": [ {column: value}, ... ]}
  nlohmann::ordered_json header = nlohmann::ordered_json::object();  // JSON: extra keys
  std::vector<TableColumn> columns;
  std::vector<std::vector<TableValue>> rows;
};

// Shortest decimal text that reads back as the same double.
std::string exact_number(double value);

void write_table_text(std::ostream& out, const Table& table);
void write_table_json(std::ostream& out, const Table& table);
void write_table_csv(std::ostream& out, const Table& table);
// format: "text" | "json" | "csv".
void write_table(std::ostream& out, const Table& table, std::string_view format);

}  // namespace tessera
