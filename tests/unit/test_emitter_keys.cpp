// The run file's [[search.emitters]] entries: misspelt keys and kinds name the nearest known one
// (edit distances counted by hand, Levenshtein 1966), keys of another kind say which kind takes
// them, and a --set value is blamed on the command line.
#include <catch2/catch.hpp>
#include <map>
#include <string>

#include "core/base/errors.hpp"
#include "io/emitter_keys.hpp"

namespace {

// The one-line message parse_emitter_entries throws for the entries in `text`.
std::string refusal(const std::string& text, const std::map<std::string, std::string>& set = {}) {
  toml::table root = toml::parse(text, std::string("run.toml"));
  try {
    tessera::parse_emitter_entries(*root["search"]["emitters"].as_array(), "run.toml", set);
  } catch (const tessera::InputError& e) {
    return e.what();
  }
  return "accepted";
}

}  // namespace

TEST_CASE("emitter keys: a misspelt key names the nearest key of its kind", "[emitters]") {
  // "sigmaa" -> "sigma": one deletion.
  CHECK(refusal("[[search.emitters]]\nkind = \"cma-me\"\nsigmaa = 0.1\n") ==
        "run.toml:3: key 'search.emitters[0].sigmaa': unknown key for kind = \"cma-me\" (did "
        "you mean 'sigma'?)");
  // "learning-rate" -> "learning_rate": one substitution; in the second entry.
  CHECK(refusal("[[search.emitters]]\nkind = \"cma-me\"\n[[search.emitters]]\nkind = "
                "\"cma-mae\"\nlearning-rate = 0.1\n") ==
        "run.toml:5: key 'search.emitters[1].learning-rate': unknown key for kind = \"cma-mae\" "
        "(did you mean 'learning_rate'?)");
  // "sigma_lin" -> "sigma_line": one insertion, for the variation kind only.
  CHECK(refusal("[[search.emitters]]\nkind = \"variation\"\nbatch = 8\nsigma_lin = 0.1\n") ==
        "run.toml:4: key 'search.emitters[0].sigma_lin': unknown key for kind = \"variation\" "
        "(did you mean 'sigma_line'?)");
}

TEST_CASE("emitter keys: a key of another kind names that kind, a far one lists the keys",
          "[emitters]") {
  // "learning_rate" is 7 or more edits from every cma-me key, and cma-mae takes it.
  CHECK(refusal("[[search.emitters]]\nkind = \"cma-me\"\nlearning_rate = 0.1\n") ==
        "run.toml:3: key 'search.emitters[0].learning_rate': unknown key for kind = \"cma-me\" "
        "(a key of kind = \"cma-mae\")");
  const std::string far = refusal("[[search.emitters]]\nkind = \"cma-mae\"\nelitism = 3\n");
  CHECK(far.find("did you mean") == std::string::npos);
  CHECK(far.find("(its keys are batch, count, kind, sigma, learning_rate, patience)") !=
        std::string::npos);
}

TEST_CASE("emitter keys: a misspelt kind names the nearest kind", "[emitters]") {
  // "cma-mea" -> "cma-me" (one deletion) before "cma-mae" (two edits).
  CHECK(refusal("[[search.emitters]]\nkind = \"cma-mea\"\n") ==
        "run.toml:2: key 'search.emitters[0].kind': unknown kind 'cma-mea' (did you mean "
        "'cma-me'?)");
  CHECK(refusal("[[search.emitters]]\nkind = \"gradient\"\n") ==
        "run.toml:2: key 'search.emitters[0].kind': unknown kind 'gradient' (choose variation, "
        "cma-me or cma-mae)");
}

TEST_CASE("emitter keys: a value given with --set is blamed on the command line", "[emitters]") {
  const std::map<std::string, std::string> set = {
      {"search.emitters[0].sigmaa", "search.emitters[0].sigmaa=0.1"}};
  CHECK(refusal("[[search.emitters]]\nkind = \"cma-mae\"\nsigmaa = 0.1\n", set) ==
        "--set search.emitters[0].sigmaa=0.1: unknown key for kind = \"cma-mae\" (did you mean "
        "'sigma'?) (command-line value for run.toml)");
  CHECK(refusal("[[search.emitters]]\nkind = \"cma-me\"\n") == "accepted");
}
