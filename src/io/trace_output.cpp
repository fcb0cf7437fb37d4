#include "io/trace_output.hpp"

#include <algorithm>
#include <nlohmann/json.hpp>
#include <sstream>

#include "io/table_output.hpp"

namespace tessera {
namespace {

// A CSV field, quoted when it holds a comma, a quote or a space at either end.
std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

std::string number_list(const std::vector<double>& values) {
  std::string out;
  for (std::size_t i = 0; i < values.size(); ++i) out += (i ? ", " : "") + exact_number(values[i]);
  return out;
}

}  // namespace

std::string trace_csv(const TracedElite& e, const Figure& trace) {
  std::ostringstream out;
  out << "# tessera trace: problem " << e.problem << ", archive " << e.archive << ", cell "
      << e.cell << ", fitness " << exact_number(e.fitness) << "\n";
  out << "# descriptor:";
  for (std::size_t i = 0; i < e.descriptor.size(); ++i)
    out << (i ? ", " : " ") << e.descriptor_names[i] << " = " << exact_number(e.descriptor[i]);
  out << "\n# genome: " << number_list(e.genome) << "\n";
  for (const auto& item : trace.items)
    if (item.kind == FigureKind::note && item.name != "caution")
      out << "# " << item.name << ": " << item.text << "\n";
  for (const auto& caution : e.cautions) out << "# " << caution << "\n";
  std::vector<std::string> columns;
  for (const auto& item : trace.items)
    for (const auto& c : item.columns)
      if (std::find(columns.begin(), columns.end(), c) == columns.end()) columns.push_back(c);
  out << "item";
  for (const auto& c : columns) out << "," << csv_field(c);
  out << "\n";
  for (const auto& item : trace.items) {
    if (item.kind == FigureKind::note || item.kind == FigureKind::descriptor_map) continue;
    std::vector<std::size_t> where(columns.size(), item.columns.size());
    for (std::size_t j = 0; j < item.columns.size(); ++j)
      where[static_cast<std::size_t>(std::find(columns.begin(), columns.end(), item.columns[j]) -
                                     columns.begin())] = j;
    for (std::size_t r = 0; r < item.rows(); ++r) {
      out << csv_field(item.name);
      for (std::size_t c = 0; c < columns.size(); ++c) {
        out << ",";
        if (where[c] < item.columns.size()) out << exact_number(item.at(r, where[c]));
      }
      out << "\n";
    }
  }
  return out.str();
}

std::string trace_json(const TracedElite& e, const Figure& trace) {
  nlohmann::ordered_json doc;
  doc["format"] = "tessera-trace";
  doc["version"] = 1;
  doc["archive"] = e.archive;
  doc["problem"] = e.problem;
  doc["cell"] = e.cell;
  doc["fitness"] = e.fitness;
  doc["descriptor_names"] = e.descriptor_names;
  doc["descriptor"] = e.descriptor;
  doc["genome"] = e.genome;
  doc["cautions"] = e.cautions;
  nlohmann::ordered_json notes = nlohmann::ordered_json::array();
  nlohmann::ordered_json items = nlohmann::ordered_json::array();
  for (const auto& item : trace.items) {
    if (item.kind == FigureKind::note) {
      notes.push_back({{"name", item.name}, {"text", item.text}});
      continue;
    }
    nlohmann::ordered_json rows = nlohmann::ordered_json::array();
    for (std::size_t r = 0; r < item.rows(); ++r)
      rows.push_back(std::vector<double>(item.values.begin() + r * item.columns.size(),
                                         item.values.begin() + (r + 1) * item.columns.size()));
    items.push_back({{"name", item.name},
                     {"kind", to_string(item.kind)},
                     {"style", to_string(item.style)},
                     {"closed", item.closed},
                     {"columns", item.columns},
                     {"rows", rows}});
  }
  doc["notes"] = notes;
  doc["items"] = items;
  return doc.dump(1) + "\n";
}

}  // namespace tessera
