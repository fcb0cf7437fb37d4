#include "io/study_file.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

#include "core/base/errors.hpp"
#include "io/input_file.hpp"
#include "io/run_file.hpp"

namespace tessera {
namespace {

// Runs one study may ask for per treatment (a count of replicates).
constexpr std::int64_t kMaxReplicates = 100000;

namespace fs = std::filesystem;

class StudyChecker {
 public:
  explicit StudyChecker(std::string source) : source_(std::move(source)) {}
  [[noreturn]] void fail(const toml::node* node, const std::string& key,
                         const std::string& fault) const {
    std::string where = source_;
    if (node && node->source().begin.line > 0)
      where += ":" + std::to_string(node->source().begin.line);
    throw InputError(where + ": key '" + key + "': " + fault);
  }

 private:
  std::string source_;
};

void check_keys(const toml::table& table, const std::string& prefix,
                const std::set<std::string>& known, const StudyChecker& checker) {
  for (const auto& [key, node] : table) {
    const std::string name(key.str());
    if (!known.count(name)) {
      std::string list;
      for (const auto& k : known) list += (list.empty() ? "" : ", ") + k;
      checker.fail(&node, prefix + name, "unknown key (known here: " + list + ")");
    }
  }
}

std::string text_of(const toml::table& t, const std::string& key, const std::string& full,
                    const StudyChecker& checker, bool required) {
  const toml::node* node = t.get(key);
  if (!node) {
    if (required) checker.fail(&t, full, "missing");
    return "";
  }
  const auto value = node->value_exact<std::string>();
  if (!value) checker.fail(node, full, "must be a string");
  if (value->empty()) checker.fail(node, full, "is empty");
  return *value;
}

std::vector<std::string> texts_of(const toml::table& t, const std::string& key,
                                  const std::string& full, const StudyChecker& checker) {
  std::vector<std::string> out;
  const toml::node* node = t.get(key);
  if (!node) return out;
  const auto* array = node->as_array();
  if (!array) checker.fail(node, full, "must be an array of strings");
  for (const auto& e : *array) {
    const auto v = e.value_exact<std::string>();
    if (!v || v->empty()) checker.fail(&e, full, "must be an array of non-empty strings");
    out.push_back(*v);
  }
  return out;
}

double number_of(const toml::table& t, const std::string& key, const std::string& full,
                 const StudyChecker& checker) {
  const toml::node* node = t.get(key);
  if (!node) checker.fail(&t, full, "missing");
  const auto v = node->value<double>();
  if (!node->is_number() || !v || !std::isfinite(*v)) checker.fail(node, full, "must be a number");
  return *v;
}

std::int64_t integer_of(const toml::table& t, const std::string& key, const std::string& full,
                        std::int64_t fallback, std::int64_t min, const StudyChecker& checker) {
  const toml::node* node = t.get(key);
  if (!node) return fallback;
  const auto v = node->value_exact<std::int64_t>();
  if (!v) checker.fail(node, full, "must be an integer");
  if (*v < min) checker.fail(node, full, "must be at least " + std::to_string(min));
  return *v;
}

// A run file named in the study: relative to the study file's folder, and it must exist.
std::string run_path(const toml::table& t, const std::string& key, const std::string& full,
                     const std::string& base, const StudyChecker& checker) {
  const std::string given = text_of(t, key, full, checker, true);
  fs::path path(given);
  if (!path.is_absolute()) path = fs::path(base) / path;
  std::error_code ec;
  if (!fs::is_regular_file(path, ec))
    checker.fail(t.get(key), full, "no such run file '" + path.lexically_normal().string() + "'");
  return fs::absolute(path, ec).lexically_normal().string();
}

// [treatment.set] holds run-file keys as in a run file (`search.algorithm = "objective"` is a
// dotted key); each leaf becomes one SECTION.KEY=VALUE override in TOML syntax.
void flatten(const toml::table& table, const std::string& prefix, std::vector<std::string>& out) {
  for (const auto& [key, node] : table) {
    const std::string path = prefix + std::string(key.str());
    if (const auto* sub = node.as_table()) {
      flatten(*sub, path + ".", out);
      continue;
    }
    toml::table holder;
    holder.insert("v", node);
    std::ostringstream text;
    text << holder;
    std::string value = text.str();
    value = value.substr(value.find('=') + 1);
    while (!value.empty() && (value.front() == ' ')) value.erase(value.begin());
    while (!value.empty() && (value.back() == '\n' || value.back() == ' ')) value.pop_back();
    out.push_back(path + "=" + value);
  }
}

std::vector<std::string> overrides_of(const toml::table& t, const std::string& full,
                                      const StudyChecker& checker) {
  std::vector<std::string> out;
  const toml::node* node = t.get("set");
  if (!node) return out;
  const auto* table = node->as_table();
  if (!table) checker.fail(node, full, "must be a table of run-file keys");
  flatten(*table, "", out);
  return out;
}

// The node of override `assignment` ("a.b.c=value") inside the table `set`, for the line number.
const toml::node* override_node(const toml::table& set, const std::string& assignment) {
  const toml::node* node = &set;
  std::string rest = assignment.substr(0, assignment.find('='));
  while (node) {
    const auto* table = node->as_table();
    if (!table) return nullptr;
    const auto dot = rest.find('.');
    node = table->get(rest.substr(0, dot));
    if (dot == std::string::npos) return node;
    rest = rest.substr(dot + 1);
  }
  return nullptr;
}

// Checks that the run file takes the overrides. A fault of one override is blamed on its key in
// `set` (the run file's checker words it as a command-line --set); any other on `run`.
void check_run(const toml::table& t, const std::string& run_file,
               const std::vector<std::string>& overrides, const std::string& prefix,
               const StudyChecker& checker) {
  try {
    (void)load_run_file(run_file, overrides);
  } catch (const InputError& e) {
    const std::string message = e.what();
    const auto* set = t.get("set") ? t.get("set")->as_table() : nullptr;
    for (const std::string& o : overrides) {
      const std::string head = "--set " + o + ": ";
      if (!set || message.rfind(head, 0) != 0) continue;
      std::string fault = message.substr(head.size());
      const std::string tail = " (command-line value for " + run_file + ")";
      if (fault.ends_with(tail)) fault.resize(fault.size() - tail.size());
      checker.fail(override_node(*set, o), prefix + "set." + o.substr(0, o.find('=')),
                   fault + " (in run file " + run_file + ")");
    }
    checker.fail(t.get("run"), prefix + "run", message);
  }
}

bool valid_label(const std::string& label) {
  if (label.empty() || label.size() > 64 || label[0] == '.' || label[0] == '-') return false;
  for (char c : label)
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' || c == '.'))
      return false;
  return true;
}

StudyMeasure parse_measure(const toml::table& t, const std::string& prefix, const std::string& base,
                           const StudyChecker& checker) {
  StudyMeasure m;
  const std::string kind = text_of(t, "kind", prefix + "kind", checker, true);
  if (kind == "final") {
    m.kind = MeasureKind::final_figures;
    check_keys(t, prefix, {"kind", "figures"}, checker);
    m.figures = texts_of(t, "figures", prefix + "figures", checker);
    if (!t.contains("figures")) m.figures = {"coverage", "qd_score", "max_fitness"};
    for (const auto& f : m.figures)
      if (f != "coverage" && f != "qd_score" && f != "max_fitness")
        checker.fail(t.get("figures"), prefix + "figures",
                     "'" + f + "' is not a history figure (coverage, qd_score, max_fitness)");
  } else if (kind == "success") {
    m.kind = MeasureKind::success;
    check_keys(t, prefix, {"kind", "name", "threshold"}, checker);
    m.name = text_of(t, "name", prefix + "name", checker, false);
    m.threshold = number_of(t, "threshold", prefix + "threshold", checker);
  } else if (kind == "probe") {
    m.kind = MeasureKind::probe;
    check_keys(t, prefix, {"kind", "name", "run", "set", "best", "figures", "places"}, checker);
    m.name = text_of(t, "name", prefix + "name", checker, true);
    m.run_file = run_path(t, "run", prefix + "run", base, checker);
    m.overrides = overrides_of(t, prefix + "set", checker);
    check_run(t, m.run_file, m.overrides, prefix, checker);
    m.best = static_cast<std::size_t>(integer_of(t, "best", prefix + "best", 0, 0, checker));
    m.figures = texts_of(t, "figures", prefix + "figures", checker);
    m.places = texts_of(t, "places", prefix + "places", checker);
    if (m.figures.empty() && m.places.empty())
      checker.fail(&t, prefix + "figures", "a probe needs figures or places to record");
  } else if (kind == "readapt") {
    m.kind = MeasureKind::readapt;
    check_keys(t, prefix, {"kind", "name", "places", "threshold", "budget"}, checker);
    m.name = text_of(t, "name", prefix + "name", checker, true);
    m.threshold = number_of(t, "threshold", prefix + "threshold", checker);
    m.budget =
        static_cast<std::uint64_t>(integer_of(t, "budget", prefix + "budget", 0, 1, checker));
    if (!t.contains("budget")) checker.fail(&t, prefix + "budget", "missing");
    const auto* places = t.get("places") ? t.get("places")->as_table() : nullptr;
    if (!places || places->empty())
      checker.fail(t.get("places") ? t.get("places") : &t, prefix + "places",
                   "must be a table: place name = run file of the arena with the goal there");
    // In the order written (a TOML table has no order of its own; the parser's is by name): the
    // goal places are usually listed from near to far, and the tables and charts keep that.
    std::vector<std::pair<const toml::node*, std::string>> written;
    for (const auto& [key, node] : *places) written.emplace_back(&node, std::string(key.str()));
    std::stable_sort(written.begin(), written.end(), [](const auto& a, const auto& b) {
      const auto &pa = a.first->source().begin, &pb = b.first->source().begin;
      return pa.line != pb.line ? pa.line < pb.line : pa.column < pb.column;
    });
    for (const auto& [node, place] : written) {
      if (!valid_label(place)) checker.fail(node, prefix + "places." + place, "bad place name");
      m.place_runs.emplace_back(
          place, run_path(*places, place, prefix + "places." + place, base, checker));
    }
  } else {
    checker.fail(t.get("kind"), prefix + "kind",
                 "unknown measure kind '" + kind + "' (final, success, probe, readapt)");
  }
  if (!m.name.empty() && !valid_label(m.name))
    checker.fail(t.get("name"), prefix + "name", "use letters, digits, '_', '-' and '.'");
  return m;
}

}  // namespace

std::vector<std::string> measure_names(const StudyMeasure& m) {
  std::vector<std::string> out;
  switch (m.kind) {
    case MeasureKind::final_figures:
      out = m.figures;
      break;
    case MeasureKind::success:  // named so that comparisons test it with Fisher's exact test
      out.push_back(m.name.empty() ? "success" : "success." + m.name);
      break;
    case MeasureKind::probe:
      for (const auto& f : m.figures) out.push_back("probe." + m.name + "." + f);
      for (const auto& p : m.places) out.push_back("probe." + m.name + ".reached." + p);
      break;
    case MeasureKind::readapt:
      for (const auto& [place, run] : m.place_runs)
        out.push_back("readapt." + m.name + "." + place);
      break;
  }
  return out;
}

StudySpec load_study_file(const std::string& path) {
  const std::string text = read_input_file(path, "study file");
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    throw InputError(path + ":" + std::to_string(e.source().begin.line) + ": " +
                     std::string(e.description()));
  }
  const StudyChecker checker(path);
  const std::string base = fs::absolute(fs::path(path)).parent_path().string();
  check_keys(root, "", {"study", "treatment", "measure"}, checker);

  StudySpec spec;
  spec.source = path;
  const auto* study = root.get("study") ? root.get("study")->as_table() : nullptr;
  if (!study) checker.fail(root.get("study"), "study", "missing table [study] (replicates)");
  check_keys(*study, "study.", {"name", "replicates", "reference"}, checker);
  spec.name = study->contains("name") ? text_of(*study, "name", "study.name", checker, true)
                                      : fs::path(path).stem().string();
  const toml::node* replicates = study->get("replicates");
  if (!replicates) checker.fail(study, "study.replicates", "missing (a count or a list of seeds)");
  if (const auto count = replicates->value_exact<std::int64_t>()) {
    if (*count < 1)
      checker.fail(replicates, "study.replicates", "zero replicates: give at least 1");
    // Checked before the seeds are listed: a count past this is a typo, not a study.
    if (*count > kMaxReplicates)
      checker.fail(replicates, "study.replicates",
                   std::to_string(*count) + " replicates, more than " +
                       std::to_string(kMaxReplicates) + ": give fewer (or a list of seeds)");
    for (std::int64_t s = 1; s <= *count; ++s) spec.seeds.push_back(static_cast<std::uint64_t>(s));
  } else if (const auto* list = replicates->as_array()) {
    if (list->empty())
      checker.fail(replicates, "study.replicates", "zero replicates: the list is empty");
    std::set<std::int64_t> seen;
    for (const auto& e : *list) {
      const auto seed = e.value_exact<std::int64_t>();
      if (!seed || *seed < 0)
        checker.fail(&e, "study.replicates", "seeds must be non-negative integers");
      if (!seen.insert(*seed).second)
        checker.fail(&e, "study.replicates", "seed " + std::to_string(*seed) + " appears twice");
      spec.seeds.push_back(static_cast<std::uint64_t>(*seed));
    }
  } else {
    checker.fail(replicates, "study.replicates", "must be a count or a list of seeds");
  }

  const auto* treatments = root.get("treatment") ? root.get("treatment")->as_array() : nullptr;
  if (!treatments || treatments->empty())
    checker.fail(root.get("treatment"), "treatment", "missing: give [[treatment]] tables");
  std::set<std::string> labels;
  for (std::size_t i = 0; i < treatments->size(); ++i) {
    const std::string prefix = "treatment[" + std::to_string(i + 1) + "].";
    const auto* t = (*treatments)[i].as_table();
    if (!t) checker.fail(&(*treatments)[i], "treatment", "must be [[treatment]] tables");
    check_keys(*t, prefix, {"label", "run", "set", "matched"}, checker);
    StudyTreatment tr;
    tr.label = text_of(*t, "label", prefix + "label", checker, true);
    if (!valid_label(tr.label))
      checker.fail(t->get("label"), prefix + "label",
                   "'" + tr.label + "': use letters, digits, '_', '-' and '.'");
    if (!labels.insert(tr.label).second)
      checker.fail(t->get("label"), prefix + "label", "duplicate label '" + tr.label + "'");
    tr.run_file = run_path(*t, "run", prefix + "run", base, checker);
    tr.overrides = overrides_of(*t, prefix + "set", checker);
    tr.matched = text_of(*t, "matched", prefix + "matched", checker, false);
    check_run(*t, tr.run_file, tr.overrides, prefix, checker);
    spec.treatments.push_back(std::move(tr));
  }
  for (std::size_t i = 0; i < spec.treatments.size(); ++i) {
    const auto& m = spec.treatments[i].matched;
    if (m.empty()) continue;
    const auto* t = (*treatments)[i].as_table();
    const std::string key = "treatment[" + std::to_string(i + 1) + "].matched";
    bool found = false;
    for (const auto& other : spec.treatments)
      if (other.label == m && other.matched.empty()) found = true;
    if (!found)
      checker.fail(t->get("matched"), key,
                   "'" + m + "' is not the label of a treatment (that is not itself matched)");
  }
  spec.reference = study->contains("reference")
                       ? text_of(*study, "reference", "study.reference", checker, true)
                       : spec.treatments.front().label;
  if (!labels.count(spec.reference))
    checker.fail(study->get("reference"), "study.reference",
                 "'" + spec.reference + "' is not the label of a treatment");

  std::set<std::string> names;
  if (const toml::node* measures = root.get("measure")) {
    const auto* list = measures->as_array();
    if (!list) checker.fail(measures, "measure", "must be [[measure]] tables");
    for (std::size_t i = 0; i < list->size(); ++i) {
      const std::string prefix = "measure[" + std::to_string(i + 1) + "].";
      const auto* t = (*list)[i].as_table();
      if (!t) checker.fail(&(*list)[i], "measure", "must be [[measure]] tables");
      StudyMeasure m = parse_measure(*t, prefix, base, checker);
      for (const auto& n : measure_names(m))
        if (!names.insert(n).second)
          checker.fail(t, prefix + "name", "measure '" + n + "' is recorded twice");
      spec.measures.push_back(std::move(m));
    }
  } else {
    StudyMeasure m;
    m.figures = {"coverage", "qd_score", "max_fitness"};
    spec.measures.push_back(m);
  }
  return spec;
}

}  // namespace tessera
