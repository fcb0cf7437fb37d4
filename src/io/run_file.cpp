#include "io/run_file.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <map>
#include <sstream>

#include "core/base/errors.hpp"
#include "io/input_file.hpp"
#include "io/closest_name.hpp"
#include "io/emitter_keys.hpp"

namespace tessera {
namespace {

namespace fs = std::filesystem;

enum class KeyType {
  integer, number, string, boolean, int_or_ints, numbers, strings, table, tables
};

struct KeySpec {
  KeyType type;
  std::function<void(toml::table&, const std::string& key)> set_default;  // may be empty
  std::string help;
};

// The schema: every key a run file may hold. Tables other than these are refused, except
// [problem.options], which belongs to the problem and is checked by it.
const std::map<std::string, KeySpec>& schema() {
  auto def_int = [](std::int64_t v) {
    return [v](toml::table& t, const std::string& k) { t.insert(k, v); };
  };
  auto def_num = [](double v) {
    return [v](toml::table& t, const std::string& k) { t.insert(k, v); };
  };
  auto def_str = [](std::string v) {
    return [v](toml::table& t, const std::string& k) { t.insert(k, v); };
  };
  static const std::map<std::string, KeySpec> keys = {
      {"problem.name", {KeyType::string, {}, "problem name (see `tessera problems`)"}},
      {"problem.kind", {KeyType::string, def_str("plugin"), "plugin | process"}},
      {"problem.options", {KeyType::table, {}, "options passed to the problem"}},
      {"problem.command", {KeyType::strings, {}, "process: the worker's command line"}},
      {"problem.workers", {KeyType::integer, {}, "process: number of worker processes"}},
      {"problem.timeout", {KeyType::number, {}, "process: seconds per evaluation"}},
      {"problem.genome_lower", {KeyType::numbers, {}, "process: genome lower bounds"}},
      {"problem.genome_upper", {KeyType::numbers, {}, "process: genome upper bounds"}},
      {"problem.descriptor_lower", {KeyType::numbers, {}, "process: descriptor lower bounds"}},
      {"problem.descriptor_upper", {KeyType::numbers, {}, "process: descriptor upper bounds"}},
      {"problem.descriptor_names", {KeyType::strings, {}, "process: descriptor names"}},
      {"problem.fitness_lower", {KeyType::number, {}, "process: lowest possible fitness"}},
      {"problem.fitness_upper", {KeyType::number, {}, "process: highest possible fitness"}},
      {"space.kind", {KeyType::string, def_str("grid"), "grid | cvt"}},
      {"space.resolution", {KeyType::int_or_ints, {}, "grid: cells per dimension"}},
      {"space.cells", {KeyType::integer, {}, "cvt: number of cells"}},
      {"space.samples", {KeyType::integer, {}, "cvt: uniform samples for k-means"}},
      {"space.iterations", {KeyType::integer, {}, "cvt: Lloyd iterations"}},
      {"space.seed", {KeyType::integer, {}, "cvt: seed of the k-means samples"}},
      {"search.algorithm", {KeyType::string, def_str("map-elites"), "search algorithm"}},
      {"search.evaluations", {KeyType::integer, def_int(100000), "evaluation budget"}},
      {"search.batch", {KeyType::integer, def_int(256), "candidates per batch"}},
      {"search.initial", {KeyType::integer, {}, "random genomes first (default: one batch)"}},
      {"search.seed", {KeyType::integer, def_int(1), "random seed"}},
      {"search.operator", {KeyType::string, def_str("iso-line-dd"), "iso-line-dd | gaussian"}},
      {"search.sigma_iso", {KeyType::number, def_num(0.01), "Iso+LineDD isotropic step"}},
      {"search.sigma_line", {KeyType::number, def_num(0.2), "Iso+LineDD line step"}},
      {"search.sigma", {KeyType::number, def_num(0.05), "Gaussian mutation step"}},
      {"search.start_from", {KeyType::string, {}, "archive whose elites are the initial genomes"}},
      {"search.start_draw", {KeyType::string, {}, "copy | resample (per-parameter)"}},
      {"search.stop_fitness", {KeyType::number, {}, "stop once the max fitness reaches it"}},
      {"search.emitters", {KeyType::tables, {}, "emitters sharing each batch (map-elites)"}},
      {"search.tournament", {KeyType::integer, def_int(3), "population searches: tournament size"}},
      {"novelty.neighbours", {KeyType::integer, def_int(15), "k nearest neighbours"}},
      {"novelty.threshold", {KeyType::number, def_num(0.05), "initial archive threshold"}},
      {"novelty.window", {KeyType::integer, def_int(2500), "evaluations per adaptation window"}},
      {"novelty.raise_above", {KeyType::integer, def_int(4), "entries per window that raise it"}},
      {"novelty.raise", {KeyType::number, def_num(1.2), "threshold factor on many entries"}},
      {"novelty.lower", {KeyType::number, def_num(0.95), "threshold factor on no entry"}},
      {"checkpoint.every_evaluations", {KeyType::integer, def_int(0), "checkpoint interval"}},
      {"checkpoint.every_seconds", {KeyType::number, def_num(300.0), "checkpoint interval"}},
      {"checkpoint.compress", {KeyType::boolean, {}, "deflate numeric datasets (default false)"}},
  };
  return keys;
}

const char* type_name(KeyType type) {
  switch (type) {
    case KeyType::integer: return "an integer";
    case KeyType::number: return "a number";
    case KeyType::string: return "a string";
    case KeyType::boolean: return "true or false";
    case KeyType::int_or_ints: return "an integer or an array of integers";
    case KeyType::numbers: return "an array of numbers";
    case KeyType::strings: return "an array of strings";
    case KeyType::table: return "a table";
    case KeyType::tables: return "an array of tables";
  }
  return "?";
}

bool has_type(const toml::node& node, KeyType type) {
  auto all_of = [&](auto predicate) {
    const auto* array = node.as_array();
    if (!array) return false;
    for (const auto& element : *array)
      if (!predicate(element)) return false;
    return true;
  };
  switch (type) {
    case KeyType::integer: return node.is_integer();
    case KeyType::number: return node.is_number();
    case KeyType::string: return node.is_string();
    case KeyType::boolean: return node.is_boolean();
    case KeyType::int_or_ints:
      return node.is_integer() || all_of([](const toml::node& n) { return n.is_integer(); });
    case KeyType::numbers: return all_of([](const toml::node& n) { return n.is_number(); });
    case KeyType::strings: return all_of([](const toml::node& n) { return n.is_string(); });
    case KeyType::table: return node.is_table();
    case KeyType::tables: return node.is_array_of_tables();
  }
  return false;
}

// Collects "FILE:LINE: key 'K': fault" messages; the first one is thrown. A key given on the
// command line (--set KEY=VALUE) is blamed there, not on the file.
class Checker {
 public:
  explicit Checker(std::string source, std::map<std::string, std::string> overrides = {})
      : source_(std::move(source)), overrides_(std::move(overrides)) {}

  [[noreturn]] void fail(const toml::node* node, const std::string& key,
                         const std::string& fault) const {
    if (const auto it = overrides_.find(key); it != overrides_.end())
      throw InputError("--set " + it->second + ": " + fault + " (command-line value for " +
                       source_ + ")");
    std::string where = source_;
    if (node && node->source().begin.line > 0)
      where += ":" + std::to_string(node->source().begin.line);
    throw InputError(where + ": key '" + key + "': " + fault);
  }
  [[noreturn]] void fail_file(const std::string& fault) const {
    throw InputError(source_ + ": " + fault);
  }

 private:
  std::string source_;
  std::map<std::string, std::string> overrides_;  // key -> the --set assignment
};

// "unknown key", with the nearest known key of the same table when one is close.
std::string unknown_key_fault(const std::string& section, const std::string& key) {
  std::vector<std::string> siblings;
  const std::string prefix = section + ".";
  for (const auto& [full, spec] : schema())
    if (full.compare(0, prefix.size(), prefix) == 0) siblings.push_back(full.substr(prefix.size()));
  if (siblings.empty()) {
    std::vector<std::string> sections;
    for (const auto& [full, spec] : schema()) {
      const std::string name = full.substr(0, full.find('.'));
      if (sections.empty() || sections.back() != name) sections.push_back(name);
    }
    if (const auto near = closest_name(section, sections))
      return "unknown table [" + section + "] (did you mean [" + *near + "]?)";
    return "unknown table [" + section + "]";
  }
  if (const auto near = closest_name(key, siblings))
    return "unknown key (did you mean '" + *near + "'?)";
  std::string list;
  for (const auto& name : siblings) list += (list.empty() ? "" : ", ") + name;
  return "unknown key (the keys of [" + section + "] are " + list + ")";
}

// Walks every key of the file, refusing those the schema does not know.
void check_known_keys(const toml::table& root, const Checker& checker) {
  for (const auto& [section_key, section_node] : root) {
    const std::string section(section_key.str());
    const auto* section_table = section_node.as_table();
    if (!section_table)
      checker.fail(&section_node, section, "top-level keys must be tables: [problem], [space], "
                                           "[search], [novelty], [checkpoint]");
    for (const auto& [key, node] : *section_table) {
      const std::string full = section + "." + std::string(key.str());
      const auto it = schema().find(full);
      if (it == schema().end())
        checker.fail(&node, full, unknown_key_fault(section, std::string(key.str())));
      if (!has_type(node, it->second.type))
        checker.fail(&node, full, std::string("must be ") + type_name(it->second.type));
    }
  }
}

toml::table& section_of(toml::table& root, const std::string& name) {
  if (!root.contains(name)) root.insert(name, toml::table{});
  return *root[name].as_table();
}

// The table `part` = "name[i]" of `parent` names: entry i of an array of tables.
toml::table* array_entry(toml::table& parent, const std::string& part, std::size_t open,
                         const std::string& assignment) {
  const std::string name = part.substr(0, open);
  const std::string digits = part.substr(open + 1, part.size() - open - 2);
  if (part.back() != ']' || digits.empty() ||
      digits.find_first_not_of("0123456789") != std::string::npos || digits.size() > 9)
    throw InputError("--set " + assignment + ": '" + part + "': expected NAME[INDEX]");
  const std::size_t index = std::stoul(digits);
  auto* list = parent[name].as_array();
  const std::size_t size = list ? list->size() : 0;
  if (index >= size)
    throw InputError("--set " + assignment + ": the run file has " + std::to_string(size) + " '" +
                     name + "' entries, so no entry " + std::to_string(index));
  auto* entry = (*list)[index].as_table();
  if (!entry) throw InputError("--set " + assignment + ": '" + part + "' is not a table");
  return entry;
}

void apply_override(toml::table& root, const std::string& assignment, const std::string& source) {
  const auto eq = assignment.find('=');
  const auto dot = assignment.find('.');
  if (eq == std::string::npos || dot == std::string::npos || dot > eq)
    throw InputError("--set " + assignment + ": expected SECTION.KEY=VALUE (for example " +
                     "search.batch=512)");
  const std::string path = assignment.substr(0, eq);
  const std::string value = assignment.substr(eq + 1);
  toml::table parsed;
  try {
    parsed = toml::parse("v = " + value);
  } catch (const toml::parse_error&) {
    parsed = toml::table{};
    parsed.insert("v", value);  // a bare word is a string
  }
  // Walk down "a.b.c", creating tables on the way; "a.list[i].c" enters the i-th table of an
  // array of tables the file already has (search.emitters).
  toml::table* table = &root;
  std::string rest = path;
  for (auto pos = rest.find('.'); pos != std::string::npos; pos = rest.find('.')) {
    const std::string part = rest.substr(0, pos);
    rest = rest.substr(pos + 1);
    if (const auto open = part.find('['); open != std::string::npos) {
      table = array_entry(*table, part, open, assignment);
      continue;
    }
    if (!table->contains(part)) table->insert(part, toml::table{});
    table = (*table)[part].as_table();
    if (!table) throw InputError("--set " + assignment + ": '" + part + "' is not a table");
  }
  table->insert_or_assign(rest, *parsed["v"].node());
  (void)source;
}

std::int64_t get_int(const toml::table& t, const std::string& key, std::int64_t fallback) {
  return t[key].value<std::int64_t>().value_or(fallback);
}
double get_num(const toml::table& t, const std::string& key, double fallback) {
  return t[key].value<double>().value_or(fallback);
}
std::string get_str(const toml::table& t, const std::string& key, const std::string& fallback) {
  return t[key].value<std::string>().value_or(fallback);
}
std::vector<double> get_nums(const toml::table& t, const std::string& key) {
  std::vector<double> out;
  if (const auto* a = t[key].as_array())
    for (const auto& e : *a) out.push_back(e.value<double>().value_or(0.0));
  return out;
}
std::vector<std::string> get_strs(const toml::table& t, const std::string& key) {
  std::vector<std::string> out;
  if (const auto* a = t[key].as_array())
    for (const auto& e : *a) out.push_back(e.value<std::string>().value_or(""));
  return out;
}

std::int64_t positive_int(const toml::table& t, const std::string& section, const std::string& key,
                          std::int64_t min, const Checker& checker) {
  const std::int64_t v = get_int(t, key, min);
  if (v < min)
    checker.fail(t[key].node(), section + "." + key, "must be at least " + std::to_string(min));
  return v;
}

// Relative file arguments of a worker's command resolve against the run file's folder, so a run
// file works from any current directory; the resolved (absolute) form is what archives store.
std::string resolve_argument(const std::string& arg, const std::string& base_dir) {
  if (arg.empty() || arg[0] == '-' || fs::path(arg).is_absolute()) return arg;
  const fs::path candidate = fs::path(base_dir) / arg;
  std::error_code ec;
  if (fs::exists(candidate, ec)) return fs::absolute(candidate, ec).lexically_normal().string();
  return arg;
}

// Problem options naming files (key `layout`, or a key ending in `_file`) resolve against the
// run file's folder like worker arguments, when such a file exists there.
void resolve_option_paths(toml::table& options, const std::string& base_dir) {
  for (auto&& [key, node] : options) {
    const std::string_view name = key.str();
    const bool names_file =
        name == "layout" || (name.size() > 5 && name.substr(name.size() - 5) == "_file");
    if (auto* text = node.as_string(); names_file && text)
      text->get() = resolve_argument(text->get(), base_dir);
  }
}

ProblemSpec parse_problem(toml::table& section, const std::string& base_dir, const Checker& checker,
                          const std::string& source) {
  ProblemSpec spec;
  spec.source = source;
  spec.kind = get_str(section, "kind", "plugin");
  spec.name = get_str(section, "name", "");
  if (spec.kind != "plugin" && spec.kind != "process")
    checker.fail(section["kind"].node(), "problem.kind", "must be \"plugin\" or \"process\"");
  if (spec.name.empty())
    checker.fail(nullptr, "problem.name", "missing (see `tessera problems` for the names)");
  if (auto* options = section["options"].as_table()) {
    resolve_option_paths(*options, base_dir);
    std::ostringstream text;
    text << *options;
    spec.options_toml = text.str();
  }
  static const char* process_keys[] = {"command", "workers", "timeout", "genome_lower",
                                        "genome_upper", "descriptor_lower", "descriptor_upper",
                                        "descriptor_names", "fitness_lower", "fitness_upper"};
  if (spec.kind == "plugin") {
    for (const char* key : process_keys)
      if (section.contains(key))
        checker.fail(section[key].node(), std::string("problem.") + key,
                     "only for kind = \"process\"");
    return spec;
  }
  if (section.contains("options"))
    checker.fail(section["options"].node(), "problem.options",
                 "a process problem takes no options table");
  for (const char* key : process_keys)
    if (std::string(key) != "workers" && std::string(key) != "timeout" && !section.contains(key))
      checker.fail(nullptr, std::string("problem.") + key, "missing (required for a process)");
  spec.command = get_strs(section, "command");
  if (spec.command.empty()) checker.fail(section["command"].node(), "problem.command", "is empty");
  auto* command = section["command"].as_array();
  for (std::size_t i = 0; i < spec.command.size(); ++i) {
    spec.command[i] = resolve_argument(spec.command[i], base_dir);
    (*command)[i].as_string()->get() = spec.command[i];
  }
  if (!section.contains("workers")) section.insert("workers", std::int64_t{1});
  if (!section.contains("timeout")) section.insert("timeout", 60.0);
  spec.workers = static_cast<std::size_t>(positive_int(section, "problem", "workers", 1, checker));
  spec.timeout_seconds = get_num(section, "timeout", 60.0);
  if (!(spec.timeout_seconds > 0.0))
    checker.fail(section["timeout"].node(), "problem.timeout", "must be positive");
  ProblemInfo& info = spec.declared;
  info.name = spec.name;
  info.summary = "external process";
  info.genome = {get_nums(section, "genome_lower"), get_nums(section, "genome_upper")};
  info.descriptor = {get_nums(section, "descriptor_lower"), get_nums(section, "descriptor_upper")};
  info.descriptor_names = get_strs(section, "descriptor_names");
  info.fitness_lower = get_num(section, "fitness_lower", 0.0);
  info.fitness_upper = get_num(section, "fitness_upper", 0.0);
  info.origin = "process: " + spec.command.front();
  try {
    check_problem_info(info);
  } catch (const std::invalid_argument& e) {
    checker.fail(&section, "problem", e.what());
  }
  return spec;
}

void parse_novelty(const toml::table& t, const Checker& checker, NoveltySettings& out) {
  out.neighbours = static_cast<std::size_t>(positive_int(t, "novelty", "neighbours", 1, checker));
  out.window = static_cast<std::uint64_t>(positive_int(t, "novelty", "window", 1, checker));
  out.raise_above = static_cast<std::uint64_t>(positive_int(t, "novelty", "raise_above", 0, checker));
  out.threshold = get_num(t, "threshold", 0.05);
  out.raise = get_num(t, "raise", 1.2);
  out.lower = get_num(t, "lower", 0.95);
  if (!(out.threshold > 0.0) || !std::isfinite(out.threshold))
    checker.fail(t["threshold"].node(), "novelty.threshold", "must be a finite number > 0");
  if (!(out.raise >= 1.0) || !std::isfinite(out.raise))
    checker.fail(t["raise"].node(), "novelty.raise", "must be a finite number >= 1");
  if (!(out.lower > 0.0 && out.lower <= 1.0))
    checker.fail(t["lower"].node(), "novelty.lower", "must lie in (0, 1]");
}

}  // namespace

std::vector<std::string> known_algorithms() {
  return {"map-elites", "novelty", "novelty-lc", "objective", "random"};
}

RunConfig parse_run_text(const std::string& text, const std::string& source,
                         const std::string& base_dir, const std::vector<std::string>& overrides) {
  std::map<std::string, std::string> overridden;
  for (const auto& assignment : overrides)
    overridden[assignment.substr(0, assignment.find('='))] = assignment;
  const Checker checker(source, overridden);
  toml::table root;
  try {
    root = toml::parse(text, source);
  } catch (const toml::parse_error& e) {
    throw InputError(source + ":" + std::to_string(e.source().begin.line) + ": " +
                     std::string(e.description()));
  }
  for (const auto& assignment : overrides) apply_override(root, assignment, source);
  check_known_keys(root, checker);

  const bool batch_given = root["search"]["batch"].node() != nullptr;
  // Fill in defaults so the stored config is complete.
  for (const auto& [full, spec] : schema()) {
    if (!spec.set_default) continue;
    const auto dot = full.find('.');
    toml::table& section = section_of(root, full.substr(0, dot));
    const std::string key = full.substr(dot + 1);
    if (!section.contains(key)) spec.set_default(section, key);
  }

  RunConfig config;
  config.source = source;
  config.base_dir = base_dir;
  config.problem = parse_problem(section_of(root, "problem"), base_dir, checker, source);

  toml::table& search = section_of(root, "search");
  config.algorithm = get_str(search, "algorithm", "map-elites");
  if (auto* entries = search["emitters"].as_array()) {
    if (config.algorithm != "map-elites")
      checker.fail(entries, "search.emitters", "only for algorithm = \"map-elites\"");
    config.emitters = parse_emitter_entries(*entries, source, overridden);
    // The batch is the emitters' candidates together.
    const auto total = static_cast<std::int64_t>(emitter_list_batch(config.emitters, 1));
    if (batch_given && get_int(search, "batch", 0) != total)
      checker.fail(search["batch"].node(), "search.batch",
                   "must equal the emitters' candidates per batch, " + std::to_string(total) +
                       " (or be left out)");
    search.insert_or_assign("batch", total);
  }
  const auto algorithms = known_algorithms();
  if (std::find(algorithms.begin(), algorithms.end(), config.algorithm) == algorithms.end()) {
    std::string list;
    for (const auto& a : algorithms) list += (list.empty() ? "" : ", ") + a;
    checker.fail(search["algorithm"].node(), "search.algorithm", "unknown algorithm '" +
                                                                     config.algorithm +
                                                                     "' (choose " + list + ")");
  }
  config.search.evaluations =
      static_cast<std::uint64_t>(positive_int(search, "search", "evaluations", 1, checker));
  config.search.batch = static_cast<std::size_t>(positive_int(search, "search", "batch", 1, checker));
  if (config.search.batch > (1u << 24))
    checker.fail(search["batch"].node(), "search.batch", "must be at most 16777216");
  if (!search.contains("initial")) search.insert("initial", static_cast<std::int64_t>(config.search.batch));
  // 0 once silently meant "one batch"; a variation step needs at least one random genome first.
  if (search["initial"].value<std::int64_t>() == 0)
    checker.fail(search["initial"].node(), "search.initial",
                 "must be at least 1 (random genomes before variation starts; leave the key out "
                 "for one batch)");
  config.search.initial = static_cast<std::uint64_t>(positive_int(search, "search", "initial", 1, checker));
  config.search.seed = static_cast<std::uint64_t>(positive_int(search, "search", "seed", 0, checker));
  try {
    config.variation.op = parse_variation_operator(get_str(search, "operator", "iso-line-dd"));
  } catch (const std::invalid_argument& e) {
    checker.fail(search["operator"].node(), "search.operator", e.what());
  }
  config.variation.sigma_iso = get_num(search, "sigma_iso", 0.01);
  config.variation.sigma_line = get_num(search, "sigma_line", 0.2);
  config.variation.sigma = get_num(search, "sigma", 0.05);
  if (search.contains("start_from")) {
    auto& path = search["start_from"].as_string()->get();
    if (path.empty()) checker.fail(search["start_from"].node(), "search.start_from", "is empty");
    if (!fs::path(path).is_absolute())
      path = (fs::path(base_dir) / path).lexically_normal().string();
    config.start_from = path;
    const std::string draw = get_str(search, "start_draw", "copy");
    if (draw != "copy" && draw != "resample")
      checker.fail(search["start_draw"].node(), "search.start_draw",
                   "must be \"copy\" or \"resample\"");
    config.start_resample = draw == "resample";
  } else if (search.contains("start_draw")) {
    checker.fail(search["start_draw"].node(), "search.start_draw", "needs search.start_from");
  }
  if (search.contains("stop_fitness")) {
    const double stop = get_num(search, "stop_fitness", 0.0);
    if (!std::isfinite(stop))
      checker.fail(search["stop_fitness"].node(), "search.stop_fitness", "must be finite");
    config.search.stop_fitness = stop;
  }
  config.population.tournament =
      static_cast<std::size_t>(positive_int(search, "search", "tournament", 1, checker));
  // Each parent costs `tournament` draws: a huge value makes a batch that never ends. Beyond
  // the population size (the batch) more draws add no selection pressure worth having.
  if (config.algorithm != "map-elites" &&
      config.population.tournament > std::max<std::size_t>(config.search.batch, 3))
    checker.fail(search["tournament"].node(), "search.tournament",
                 "must be at most the population size, search.batch = " +
                     std::to_string(config.search.batch));
  parse_novelty(section_of(root, "novelty"), checker, config.population.novelty);
  for (const char* key : {"sigma_iso", "sigma_line", "sigma"}) {
    const double v = get_num(search, key, 0.0);
    if (!(v >= 0.0) || !std::isfinite(v))
      checker.fail(search[key].node(), std::string("search.") + key, "must be a finite number >= 0");
  }

  toml::table& space = section_of(root, "space");
  config.space.kind = get_str(space, "kind", "grid");
  if (config.space.kind == "grid") {
    for (const char* key : {"cells", "samples", "iterations", "seed"})
      if (space.contains(key))
        checker.fail(space[key].node(), std::string("space.") + key, "only for kind = \"cvt\"");
    if (!space.contains("resolution"))
      checker.fail(nullptr, "space.resolution", "missing (cells per descriptor dimension)");
    if (const auto* array = space["resolution"].as_array()) {
      if (array->empty()) checker.fail(array, "space.resolution", "is empty");
      for (const auto& e : *array) config.space.resolution.push_back(e.value<std::int64_t>().value_or(0));
    } else {
      config.space.resolution.push_back(get_int(space, "resolution", 0));
    }
    for (auto r : config.space.resolution)
      if (r < 1) checker.fail(space["resolution"].node(), "space.resolution", "zero cells: every resolution must be at least 1");
  } else if (config.space.kind == "cvt") {
    if (space.contains("resolution"))
      checker.fail(space["resolution"].node(), "space.resolution", "only for kind = \"grid\"");
    if (!space.contains("cells")) space.insert("cells", std::int64_t{1000});
    if (!space.contains("samples")) space.insert("samples", std::int64_t{0});
    if (!space.contains("iterations")) space.insert("iterations", std::int64_t{50});
    // The tessellation has its own seed so replicated runs (different search seeds) share it.
    if (!space.contains("seed")) space.insert("seed", std::int64_t{0});
    config.space.cvt.cells = positive_int(space, "space", "cells", 1, checker);
    config.space.cvt.samples = positive_int(space, "space", "samples", 0, checker);
    if (config.space.cvt.samples != 0 && config.space.cvt.samples < config.space.cvt.cells)
      checker.fail(space["samples"].node(), "space.samples", "must be 0 (automatic) or at least the number of cells");
    config.space.cvt.iterations = static_cast<int>(positive_int(space, "space", "iterations", 1, checker));
    config.space.cvt.seed = static_cast<std::uint64_t>(positive_int(space, "space", "seed", 0, checker));
  } else {
    checker.fail(space["kind"].node(), "space.kind", "must be \"grid\" or \"cvt\"");
  }

  toml::table& checkpoint = section_of(root, "checkpoint");
  config.checkpoint.every_evaluations =
      static_cast<std::uint64_t>(positive_int(checkpoint, "checkpoint", "every_evaluations", 0, checker));
  config.checkpoint.every_seconds = get_num(checkpoint, "every_seconds", 300.0);
  if (!(config.checkpoint.every_seconds >= 0.0))
    checker.fail(checkpoint["every_seconds"].node(), "checkpoint.every_seconds", "must be >= 0");
  config.checkpoint.compress = checkpoint["compress"].value<bool>().value_or(false);

  std::ostringstream resolved;
  resolved << root;
  config.resolved_toml = resolved.str();
  return config;
}

RunConfig load_run_file(const std::string& path, const std::vector<std::string>& overrides) {
  const std::string text = read_input_file(path, "run file");
  const std::string base = fs::absolute(fs::path(path)).parent_path().string();
  return parse_run_text(text, path, base, overrides);
}

}  // namespace tessera
