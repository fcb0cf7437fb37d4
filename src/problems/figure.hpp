// What a problem draws and traces (plugin ABI version 2, process protocol scene/trace
// messages): a list of items, each a table of numbers in the problem's units with a name and
// column names, or a note of text. The report draws figures and `tessera trace` exports them;
// neither knows any problem's insides.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

namespace tessera {

enum class FigureKind { polyline, circles, points, series, descriptor_map, note };
enum class FigureStyle { line, wall, zone, guide, anchor, body };

struct FigureItem {
  FigureKind kind = FigureKind::polyline;
  FigureStyle style = FigureStyle::line;
  bool closed = false;  // polyline: the last row joins the first
  std::string name;
  std::vector<std::string> columns;  // data items
  std::vector<double> values;        // rows() * columns.size(), row-major
  std::string text;                  // note only

  std::size_t rows() const { return columns.empty() ? 0 : values.size() / columns.size(); }
  double at(std::size_t row, std::size_t column) const {
    return values[row * columns.size() + column];
  }
  // Polylines and points: whether the first column is a time, phase or index column.
  bool has_key_column() const {
    return (kind == FigureKind::polyline || kind == FigureKind::points) && columns.size() == 3;
  }
  // Column of x (y follows) in a polyline, points or circles item.
  std::size_t x_column() const { return has_key_column() ? 1 : 0; }
};

struct Figure {
  std::vector<FigureItem> items;

  // The value of note `key`, or empty.
  std::string note(const std::string& key) const;
  // Every note called `key`, in order (e.g. all "caution" notes).
  std::vector<std::string> notes(const std::string& key) const;
};

const char* to_string(FigureKind kind);
const char* to_string(FigureStyle style);
std::optional<FigureKind> figure_kind_from(const std::string& name);
std::optional<FigureStyle> figure_style_from(const std::string& name);

// Throws std::invalid_argument naming the first inconsistent item: a wrong column count for its
// kind, a ragged table, an empty or repeated name, a non-finite number.
void check_figure(const Figure& figure);

}  // namespace tessera
