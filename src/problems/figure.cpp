#include "problems/figure.hpp"

#include <cmath>
#include <set>
#include <stdexcept>

namespace tessera {
namespace {

constexpr const char* kKindNames[] = {"polyline", "circles",        "points",
                                      "series",   "descriptor_map", "note"};
constexpr const char* kStyleNames[] = {"line", "wall", "zone", "guide", "anchor", "body"};

}  // namespace

std::string Figure::note(const std::string& key) const {
  for (const auto& item : items)
    if (item.kind == FigureKind::note && item.name == key) return item.text;
  return "";
}

std::vector<std::string> Figure::notes(const std::string& key) const {
  std::vector<std::string> out;
  for (const auto& item : items)
    if (item.kind == FigureKind::note && item.name == key) out.push_back(item.text);
  return out;
}

const char* to_string(FigureKind kind) {
  return kKindNames[static_cast<int>(kind)];
}
const char* to_string(FigureStyle style) {
  return kStyleNames[static_cast<int>(style)];
}

std::optional<FigureKind> figure_kind_from(const std::string& name) {
  for (int i = 0; i < 6; ++i)
    if (name == kKindNames[i]) return static_cast<FigureKind>(i);
  return std::nullopt;
}

std::optional<FigureStyle> figure_style_from(const std::string& name) {
  for (int i = 0; i < 6; ++i)
    if (name == kStyleNames[i]) return static_cast<FigureStyle>(i);
  return std::nullopt;
}

void check_figure(const Figure& figure) {
  std::set<std::string> names;
  for (const auto& item : figure.items) {
    const std::string who = std::string(to_string(item.kind)) + " '" + item.name + "'";
    if (item.name.empty())
      throw std::invalid_argument(std::string(to_string(item.kind)) + " item without a name");
    // Notes may repeat (several cautions); data items are told apart by name.
    if (item.kind != FigureKind::note && !names.insert(item.name).second)
      throw std::invalid_argument("item name '" + item.name + "' appears twice");
    const std::size_t c = item.columns.size();
    bool ok = true;
    switch (item.kind) {
      case FigureKind::polyline:
      case FigureKind::points:
        ok = c == 2 || c == 3;
        break;
      case FigureKind::circles:
        ok = c == 3;
        break;
      case FigureKind::series:
        ok = c >= 2;
        break;
      case FigureKind::descriptor_map:
        ok = c == 6 && item.values.size() == 6;
        break;
      case FigureKind::note:
        ok = c == 0 && item.values.empty();
        break;
    }
    if (!ok) throw std::invalid_argument(who + " has " + std::to_string(c) + " columns");
    if (c > 0 && item.values.size() % c != 0)
      throw std::invalid_argument(who + ": the numbers do not fill whole rows");
    for (const auto& column : item.columns)
      if (column.empty()) throw std::invalid_argument(who + " has an unnamed column");
    for (double v : item.values)
      if (!std::isfinite(v)) throw std::invalid_argument(who + " holds a NaN or infinite number");
  }
}

}  // namespace tessera
