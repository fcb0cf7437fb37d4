// Helpers shared by the shipped plugins: error text across the C ABI, option tables parsed with
// toml++, and storage behind tsr_metadata. Header-only; a plugin still sees only the public
// plugin header plus header-only libraries.
#pragma once

#include <tessera/plugin.h>

#include <toml++/toml.h>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <exception>
#include <initializer_list>
#include <limits>
#include <string>
#include <string_view>
#include <vector>

namespace tessera::plugin_glue {

// Copies text into the caller's buffer as one NUL-terminated line (newlines become spaces),
// truncated to fit.
inline void write_error(char* error, std::size_t size, std::string_view text) {
  if (error == nullptr || size == 0) return;
  const std::size_t n = std::min(text.size(), size - 1);
  for (std::size_t i = 0; i < n; ++i)
    error[i] = (text[i] == '\n' || text[i] == '\r') ? ' ' : text[i];
  error[n] = '\0';
}

// The body of tsr_create: runs `make` (which returns the new instance) so that no C++ exception
// crosses the C ABI; any exception becomes the error text and a null instance.
template <class Make>
auto create_instance(char* error, std::size_t size, Make&& make) -> decltype(make()) {
  try {
    return make();
  } catch (const std::exception& e) {
    write_error(error, size, e.what());
  } catch (...) {
    write_error(error, size, "unknown error while reading the options");
  }
  return nullptr;
}

// Thrown by option checks; the message goes back through tsr_create's error buffer.
struct OptionError : std::exception {
  explicit OptionError(std::string m) : message(std::move(m)) {}
  const char* what() const noexcept override { return message.c_str(); }
  std::string message;
};

// Parses the [problem.options] text; an empty string is an empty table.
inline toml::table parse_options(const char* text) {
  if (text == nullptr || *text == '\0') return {};
  try {
    return toml::parse(std::string_view(text));
  } catch (const toml::parse_error& e) {
    const auto& where = e.source().begin;
    throw OptionError("options are not valid TOML (line " + std::to_string(where.line) +
                      ", column " + std::to_string(where.column) +
                      "): " + std::string(e.description()));
  }
}

// Refuses any key not in `allowed`, naming it and the accepted keys.
inline void check_keys(const toml::table& options,
                       std::initializer_list<std::string_view> allowed) {
  for (const auto& [key, value] : options) {
    bool known = false;
    for (auto name : allowed) known = known || key.str() == name;
    if (!known) {
      std::string list;
      for (auto name : allowed) list += (list.empty() ? "" : ", ") + std::string(name);
      throw OptionError("unknown option '" + std::string(key.str()) +
                        "' (accepted: " + (list.empty() ? "none" : list) + ")");
    }
  }
}

// An integer option within [min, max], or `fallback` when absent.
inline std::int64_t integer_option(const toml::table& options, std::string_view key,
                                   std::int64_t fallback, std::int64_t min, std::int64_t max) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return fallback;
  const auto value = node->value_exact<std::int64_t>();
  if (!value) throw OptionError("option '" + std::string(key) + "' must be an integer");
  if (*value < min || *value > max)
    throw OptionError("option '" + std::string(key) + "' = " + std::to_string(*value) +
                      " is out of range [" + std::to_string(min) + ", " + std::to_string(max) +
                      "]");
  return *value;
}

// A finite number option within [min, max] (integers accepted), or `fallback` when absent.
inline double number_option(const toml::table& options, std::string_view key, double fallback,
                            double min, double max) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return fallback;
  const auto value = node->value<double>();
  if (!value || !std::isfinite(*value))
    throw OptionError("option '" + std::string(key) + "' must be a finite number");
  if (*value < min || *value > max)
    throw OptionError("option '" + std::string(key) + "' = " + std::to_string(*value) +
                      " is out of range [" + std::to_string(min) + ", " + std::to_string(max) +
                      "]");
  return *value;
}

// An array of exactly `size` finite numbers, or an empty vector when absent.
inline std::vector<double> numbers_option(const toml::table& options, std::string_view key,
                                          std::size_t size) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return {};
  const toml::array* array = node->as_array();
  std::vector<double> out;
  if (array != nullptr)
    for (const auto& element : *array)
      if (const auto v = element.value<double>(); v && std::isfinite(*v)) out.push_back(*v);
  if (array == nullptr || out.size() != array->size() || out.size() != size)
    throw OptionError("option '" + std::string(key) + "' must be an array of " +
                      std::to_string(size) + " finite numbers");
  return out;
}

// Owns everything tsr_metadata points to, for the lifetime of an instance.
struct MetadataStore {
  std::string name;
  std::string summary;
  std::vector<double> genome_lower, genome_upper;
  std::vector<double> descriptor_lower, descriptor_upper;
  std::vector<std::string> descriptor_names;
  std::vector<const char*> descriptor_name_ptrs;
  double fitness_lower = 0.0;
  double fitness_upper = 0.0;
  std::vector<std::string> extra_names;
  std::vector<const char*> extra_name_ptrs;

  // Call once every field is set: collects the C string pointers.
  void finish() {
    descriptor_name_ptrs.clear();
    for (const auto& s : descriptor_names) descriptor_name_ptrs.push_back(s.c_str());
    extra_name_ptrs.clear();
    for (const auto& s : extra_names) extra_name_ptrs.push_back(s.c_str());
  }

  void describe(tsr_metadata* out) const {
    out->name = name.c_str();
    out->summary = summary.c_str();
    out->genome_size = genome_lower.size();
    out->genome_lower = genome_lower.data();
    out->genome_upper = genome_upper.data();
    out->descriptor_size = descriptor_lower.size();
    out->descriptor_lower = descriptor_lower.data();
    out->descriptor_upper = descriptor_upper.data();
    out->descriptor_names = descriptor_name_ptrs.data();
    out->fitness_lower = fitness_lower;
    out->fitness_upper = fitness_upper;
    out->extra_size = extra_names.size();
    out->extra_names = extra_name_ptrs.empty() ? nullptr : extra_name_ptrs.data();
  }
};

// Collects a figure (scene or trace) and hands it over with the two-call size protocol of
// tsr_figure: sizes always, content only when every buffer is large enough.
class FigureBuilder {
 public:
  // A data item; `columns` are the comma-separated column names, `values` rows * columns numbers.
  void add(uint32_t kind, uint32_t style, std::string_view name, std::string_view columns,
           const std::vector<double>& values, uint32_t flags = 0) {
    const std::size_t n =
        static_cast<std::size_t>(std::count(columns.begin(), columns.end(), ',')) + 1;
    tsr_item item{};
    item.kind = kind;
    item.style = style;
    item.flags = flags;
    item.columns = n;
    item.rows = values.size() / n;
    item.values = values_.size();
    item.name = text(name);
    item.text = text(columns);
    values_.insert(values_.end(), values.begin(), values.end());
    items_.push_back(item);
  }
  void note(std::string_view key, std::string_view value) {
    tsr_item item{};
    item.kind = TSR_NOTE;
    item.values = values_.size();
    item.name = text(key);
    item.text = text(value);
    items_.push_back(item);
  }

  int write(tsr_figure* out) const {
    out->item_count = items_.size();
    out->value_count = values_.size();
    out->text_count = text_.size();
    if (items_.size() > out->item_capacity || values_.size() > out->value_capacity ||
        text_.size() > out->text_capacity)
      return TSR_TOO_SMALL;
    std::copy(items_.begin(), items_.end(), out->items);
    std::copy(values_.begin(), values_.end(), out->values);
    std::copy(text_.begin(), text_.end(), out->text);
    return TSR_OK;
  }

 private:
  std::size_t text(std::string_view s) {
    const std::size_t at = text_.size();
    text_.append(s);
    text_.append(1, '\0');
    return at;
  }

  std::vector<tsr_item> items_;
  std::vector<double> values_;
  std::string text_;  // NUL-separated strings
};

// Runs `build(FigureBuilder&)` and writes the figure, turning exceptions into TSR_ERROR.
template <class Build>
int write_figure(tsr_figure* out, char* error, std::size_t error_size, Build&& build) {
  try {
    FigureBuilder figure;
    build(figure);
    return figure.write(out);
  } catch (const std::exception& e) {
    write_error(error, error_size, e.what());
  } catch (...) {
    write_error(error, error_size, "unknown error while drawing");
  }
  return TSR_ERROR;
}

}  // namespace tessera::plugin_glue

// The four exports every plugin built on this glue writes alike: the ABI version, the problem
// name, tsr_describe (from the instance's `metadata` store) and tsr_destroy. Expand once at file
// scope, after `struct tsr_instance` is complete.
#define TESSERA_GLUE_STANDARD_EXPORTS(problem_name)                                   \
  extern "C" {                                                                        \
  TSR_EXPORT uint32_t tsr_abi_version(void) { return TSR_ABI_VERSION; }               \
  TSR_EXPORT const char* tsr_problem_name(void) { return problem_name; }              \
  TSR_EXPORT void tsr_describe(const tsr_instance* instance, tsr_metadata* out) {     \
    instance->metadata.describe(out);                                                 \
  }                                                                                   \
  TSR_EXPORT void tsr_destroy(tsr_instance* instance) { delete instance; }            \
  }
