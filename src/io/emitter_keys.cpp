#include "io/emitter_keys.hpp"

#include <cmath>
#include <set>

#include "core/base/errors.hpp"
#include "io/closest_name.hpp"

namespace tessera {
namespace {

struct EntryChecker {
  const std::string& source;
  std::string prefix;  // "search.emitters[i]"
  const std::map<std::string, std::string>* overrides = nullptr;

  [[noreturn]] void fail(const toml::node* node, const std::string& key,
                         const std::string& fault) const {
    // A key given on the command line is blamed there, as the other run-file keys are.
    const std::string full = prefix + (key.empty() ? "" : "." + key);
    if (overrides)
      if (const auto it = overrides->find(full); it != overrides->end())
        throw InputError("--set " + it->second + ": " + fault + " (command-line value for " +
                         source + ")");
    std::string where = source;
    if (node && node->source().begin.line > 0)
      where += ":" + std::to_string(node->source().begin.line);
    throw InputError(where + ": key '" + prefix + (key.empty() ? "" : "." + key) + "': " + fault);
  }
};

// Keys every kind takes, and those of each kind.
const std::set<std::string>& common_keys() {
  static const std::set<std::string> keys = {"kind", "count", "batch", "sigma"};
  return keys;
}
const std::set<std::string>& kind_keys(const std::string& kind) {
  static const std::set<std::string> variation = {"operator", "sigma_iso", "sigma_line"};
  static const std::set<std::string> cma_me = {"ranking", "patience"};
  static const std::set<std::string> cma_mae = {"learning_rate", "patience"};
  return kind == "variation" ? variation : kind == "cma-me" ? cma_me : cma_mae;
}
const std::vector<std::string>& kinds() {
  static const std::vector<std::string> names = {"variation", "cma-me", "cma-mae"};
  return names;
}

// "unknown key", with the nearest key this kind takes when one is close, else the kind that
// takes it, else the list of this kind's keys.
std::string unknown_entry_key_fault(const std::string& kind, const std::string& key) {
  std::vector<std::string> known(common_keys().begin(), common_keys().end());
  known.insert(known.end(), kind_keys(kind).begin(), kind_keys(kind).end());
  const std::string fault = "unknown key for kind = \"" + kind + "\"";
  if (const auto near = closest_name(key, known)) return fault + " (did you mean '" + *near + "'?)";
  for (const auto& other : kinds())
    if (kind_keys(other).count(key)) return fault + " (a key of kind = \"" + other + "\")";
  std::string list;
  for (const auto& name : known) list += (list.empty() ? "" : ", ") + name;
  return fault + " (its keys are " + list + ")";
}

std::int64_t integer_key(toml::table& t, const std::string& key, std::int64_t fallback,
                         std::int64_t min, const EntryChecker& checker) {
  if (!t.contains(key)) t.insert(key, fallback);
  const auto* node = t[key].node();
  if (!node->is_integer()) checker.fail(node, key, "must be an integer");
  const std::int64_t v = node->value<std::int64_t>().value_or(min);
  if (v < min) checker.fail(node, key, "must be at least " + std::to_string(min));
  return v;
}

double number_key(toml::table& t, const std::string& key, double fallback, bool positive,
                  const EntryChecker& checker) {
  if (!t.contains(key)) t.insert(key, fallback);
  const auto* node = t[key].node();
  if (!node->is_number()) checker.fail(node, key, "must be a number");
  const double v = node->value<double>().value_or(0.0);
  if (!std::isfinite(v) || v < 0.0 || (positive && v == 0.0))
    checker.fail(node, key,
                 positive ? "must be a finite number > 0" : "must be a finite number >= 0");
  return v;
}

std::string string_key(toml::table& t, const std::string& key, const std::string& fallback,
                       const EntryChecker& checker) {
  if (!t.contains(key)) t.insert(key, fallback);
  const auto* node = t[key].node();
  if (!node->is_string()) checker.fail(node, key, "must be a string");
  return node->value<std::string>().value_or("");
}

}  // namespace

std::vector<EmitterSpec> parse_emitter_entries(
    toml::array& entries, const std::string& source,
    const std::map<std::string, std::string>& overrides) {
  std::vector<EmitterSpec> specs;
  if (entries.empty())
    EntryChecker{source, "search.emitters", &overrides}.fail(&entries, "",
                                                             "needs at least one entry");
  for (std::size_t i = 0; i < entries.size(); ++i) {
    const EntryChecker checker{source, "search.emitters[" + std::to_string(i) + "]", &overrides};
    auto* table = entries[i].as_table();
    if (!table) checker.fail(&entries[i], "", "must be a table ([[search.emitters]])");
    EmitterSpec spec;
    if (!table->contains("kind"))
      checker.fail(table, "kind", "missing (variation, cma-me or cma-mae)");
    spec.kind = string_key(*table, "kind", "", checker);
    if (spec.kind != "variation" && spec.kind != "cma-me" && spec.kind != "cma-mae") {
      const auto near = closest_name(spec.kind, kinds());
      checker.fail(
          (*table)["kind"].node(), "kind",
          "unknown kind '" + spec.kind + "' (" +
              (near ? "did you mean '" + *near + "'?" : "choose variation, cma-me or cma-mae") +
              ")");
    }
    for (const auto& [key, node] : *table) {
      const std::string name(key.str());
      if (!common_keys().count(name) && !kind_keys(spec.kind).count(name))
        checker.fail(&node, name, unknown_entry_key_fault(spec.kind, name));
    }
    spec.count = static_cast<std::size_t>(integer_key(*table, "count", 1, 1, checker));
    spec.batch = static_cast<std::size_t>(integer_key(*table, "batch", kDefaultEmitterBatch,
                                                      spec.kind == "variation" ? 1 : 2, checker));
    if (spec.kind == "variation") {
      try {
        spec.variation.op =
            parse_variation_operator(string_key(*table, "operator", "iso-line-dd", checker));
      } catch (const std::invalid_argument& e) {
        checker.fail((*table)["operator"].node(), "operator", e.what());
      }
      spec.variation.sigma = number_key(*table, "sigma", 0.05, false, checker);
      spec.variation.sigma_iso = number_key(*table, "sigma_iso", 0.01, false, checker);
      spec.variation.sigma_line = number_key(*table, "sigma_line", 0.2, false, checker);
    } else {
      spec.cma.sigma = number_key(*table, "sigma", 0.05, true, checker);
      if (spec.kind == "cma-me") {
        try {
          spec.cma.ranking =
              parse_cma_ranking(string_key(*table, "ranking", "improvement", checker));
        } catch (const std::invalid_argument& e) {
          checker.fail((*table)["ranking"].node(), "ranking", e.what());
        }
      } else {
        spec.cma.ranking = CmaRanking::threshold;
        spec.cma.learning_rate = number_key(*table, "learning_rate", 0.01, false, checker);
        if (spec.cma.learning_rate > 1.0)
          checker.fail((*table)["learning_rate"].node(), "learning_rate", "must lie in [0, 1]");
      }
      // The optimising ranking restarts only when the distribution stalls (CMA-ME's rule).
      const std::int64_t patience = spec.cma.ranking == CmaRanking::optimising ? 0 : 1;
      spec.cma.patience =
          static_cast<std::uint64_t>(integer_key(*table, "patience", patience, 0, checker));
    }
    specs.push_back(spec);
  }
  // One archive, one learning rate.
  double rate = -1.0;
  for (std::size_t i = 0; i < specs.size(); ++i) {
    if (specs[i].kind != "cma-mae") continue;
    if (rate >= 0.0 && specs[i].cma.learning_rate != rate)
      EntryChecker{source, "search.emitters[" + std::to_string(i) + "]", &overrides}.fail(
          entries[i].as_table()->get("learning_rate"), "learning_rate",
          "differs from an earlier cma-mae entry's (the archive keeps one learning rate)");
    rate = specs[i].cma.learning_rate;
  }
  return specs;
}

}  // namespace tessera
