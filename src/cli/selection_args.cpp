#include "cli/selection_args.hpp"

#include <charconv>
#include <cmath>

#include "core/base/errors.hpp"
#include "io/table_output.hpp"

namespace tessera::cli {
namespace {

std::string trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return "";
  return s.substr(b, s.find_last_not_of(" \t") - b + 1);
}

bool parse_double(const std::string& text, double& value) {
  const std::string t = trim(text);
  const char* begin = t.data();
  const char* end = t.data() + t.size();
  if (begin != end && *begin == '+') ++begin;
  const auto r = std::from_chars(begin, end, value);
  return begin != end && r.ec == std::errc() && r.ptr == end && std::isfinite(value);
}

std::string names_of(const ArchiveSnapshot& s) {
  std::string out;
  for (const auto& n : s.descriptor_names) out += (out.empty() ? "" : ", ") + n;
  return out;
}

}  // namespace

std::vector<double> parse_number_list(const std::string& text, const std::string& option) {
  std::vector<double> out;
  std::size_t start = 0;
  while (true) {
    const auto comma = text.find(',', start);
    const std::string field =
        text.substr(start, comma == std::string::npos ? std::string::npos : comma - start);
    double v = 0.0;
    if (!parse_double(field, v))
      throw InputError(option + " '" + text + "': '" + trim(field) + "' is not a finite number");
    out.push_back(v);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return out;
}

std::size_t descriptor_index(const ArchiveSnapshot& s, const std::string& archive,
                             const std::string& name, const std::string& option) {
  for (std::size_t i = 0; i < s.descriptor_names.size(); ++i)
    if (s.descriptor_names[i] == name) return i;
  throw InputError(archive + ": " + option + ": no descriptor named '" + name +
                   "' (descriptors: " + names_of(s) + ")");
}

FigureRef figure_index(const ArchiveSnapshot& s, const std::string& archive,
                       const std::string& name, const std::string& option) {
  for (std::size_t i = 0; i < s.descriptor_names.size(); ++i)
    if (s.descriptor_names[i] == name) return {i, false};
  for (std::size_t i = 0; i < s.extra_names.size(); ++i)
    if (s.extra_names[i] == name) return {i, true};
  std::string extras;
  for (const auto& n : s.extra_names) extras += (extras.empty() ? "" : ", ") + n;
  if (extras.empty()) extras = s.format_version == 1 ? "none: format 1 archives keep none" : "none";
  throw InputError(archive + ": " + option + ": no descriptor or extra figure named '" + name +
                   "' (descriptors: " + names_of(s) + "; extra figures: " + extras + ")");
}

std::vector<DescriptorInterval> parse_within(const std::vector<std::string>& specs,
                                             const ArchiveSnapshot& s, const std::string& archive) {
  std::vector<DescriptorInterval> out;
  for (const auto& spec : specs) {
    const auto eq = spec.rfind('=');
    const auto colon = eq == std::string::npos ? std::string::npos : spec.find(':', eq);
    double lo = 0.0, hi = 0.0;
    if (eq == std::string::npos || colon == std::string::npos ||
        !parse_double(spec.substr(eq + 1, colon - eq - 1), lo) ||
        !parse_double(spec.substr(colon + 1), hi))
      throw InputError("--within '" + spec + "': expected NAME=LO:HI with numbers LO <= HI");
    if (lo > hi) throw InputError("--within '" + spec + "': LO is above HI");
    const FigureRef figure = figure_index(s, archive, trim(spec.substr(0, eq)), "--within");
    DescriptorInterval interval;
    interval.dimension = figure.index;
    interval.extra = figure.extra;
    interval.lower = lo;
    interval.upper = hi;
    out.push_back(interval);
  }
  return out;
}

std::vector<NamedObjective> parse_objectives(const std::vector<std::string>& specs,
                                             const ArchiveSnapshot& s, const std::string& archive) {
  std::vector<NamedObjective> out;
  for (const auto& spec : specs) {
    const auto colon = spec.rfind(':');
    const std::string goal = colon == std::string::npos ? "" : trim(spec.substr(colon + 1));
    if (colon == std::string::npos || (goal != "min" && goal != "max"))
      throw InputError("--objective '" + spec + "': expected NAME:min or NAME:max (NAME is " +
                       "fitness, a descriptor or an extra figure name)");
    NamedObjective o;
    o.name = trim(spec.substr(0, colon));
    o.objective.goal = goal == "min" ? Goal::minimize : Goal::maximize;
    // "fitness" is the elite's fitness even if a descriptor had that name.
    o.objective.fitness = o.name == "fitness";
    if (!o.objective.fitness) {
      const FigureRef figure = figure_index(s, archive, o.name, "--objective");
      o.objective.dimension = figure.index;
      o.objective.extra = figure.extra;
    }
    out.push_back(o);
  }
  return out;
}

std::vector<std::size_t> parse_axes(const std::string& spec, const ArchiveSnapshot& s,
                                    const std::string& archive) {
  const auto comma = spec.find(',');
  if (comma == std::string::npos || spec.find(',', comma + 1) != std::string::npos)
    throw InputError("--axes '" + spec + "': expected two descriptor names, NAME1,NAME2");
  const std::size_t a = descriptor_index(s, archive, trim(spec.substr(0, comma)), "--axes");
  const std::size_t b = descriptor_index(s, archive, trim(spec.substr(comma + 1)), "--axes");
  if (a == b) throw InputError("--axes '" + spec + "': the two axes must differ");
  return {a, b};
}

std::string describe_filter(const EliteFilter& f, const ArchiveSnapshot& s) {
  std::string out;
  if (f.min_fitness) out = "--min-fitness " + exact_number(*f.min_fitness);
  for (const auto& w : f.within)
    out += (out.empty() ? "" : ", ") + std::string("--within ") +
           (w.extra ? s.extra_names[w.dimension] : s.descriptor_names[w.dimension]) + "=" +
           exact_number(w.lower) + ":" + exact_number(w.upper);
  return out.empty() ? "no constraints" : out;
}

}  // namespace tessera::cli
