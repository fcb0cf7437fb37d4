// Shipped problems loaded as plugins through the registry: their metadata, bit-identical output
// against the in-process model headers (single calls and whole MAP-Elites archives), options, and
// refusal of faulty plugin files (tests/fixtures/bad_plugins).
#include <stdlib.h>
#include <unistd.h>

#include <tessera/plugin.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "arm/arm_model.hpp"
#include "core/archive/space.hpp"
#include "core/base/errors.hpp"
#include "core/search/map_elites.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/plugin_problem.hpp"
#include "problems/registry.hpp"
#include "projection/projection_model.hpp"

namespace {

namespace fs = std::filesystem;

const std::string kPluginDir = TESSERA_PLUGIN_DIR;
const std::string kBadDir = TESSERA_BAD_PLUGIN_DIR;

void use_plugin_path(const std::string& path) {
  setenv("TESSERA_PLUGIN_PATH", path.c_str(), 1);
}

std::string plugin_file(const std::string& dir, const std::string& name) {
  return dir + "/tessera-plugin-" + name + ".so";
}

// The in-process reference: the model header the plugin wraps.
void model_evaluate(const std::string& problem, const double* genome, std::size_t n,
                    double& fitness, double* descriptor) {
  namespace proj = tessera::projection;
  if (problem == "arm") {
    tessera::arm::evaluate(genome, n, fitness, descriptor);
  } else {
    const auto kind = problem == "sphere-proj" ? proj::Kind::kSphere : proj::Kind::kRastrigin;
    proj::evaluate(kind, genome, n, proj::objective_max(kind, n), fitness, descriptor);
  }
}

bool same_bits(double a, double b) {
  return std::memcmp(&a, &b, sizeof a) == 0;
}

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

// The InputError message of `action`, or "" when nothing is thrown.
template <typename Action>
std::string input_error_of(Action action) {
  try {
    action();
  } catch (const tessera::InputError& e) {
    return e.what();
  }
  return "";
}

struct Shipped {
  std::string name;
  std::size_t genome_size;
  double genome_bound;
  double descriptor_bound;
  std::vector<std::string> descriptor_names;
  double fitness_lower;
  double fitness_upper;
};

const std::vector<Shipped>& shipped() {
  static const std::vector<Shipped> list = {
      // README.md "Shipped problems": arm 10 joints in [-pi, pi], tip in [-1, 1]^2, fitness
      // [-pi^2, 0]; projections 100 parameters in [-5.12, 5.12], sums in [-256, 256], [0, 100].
      {"arm", 10, std::numbers::pi, 1.0, {"x", "y"}, -std::numbers::pi * std::numbers::pi, 0.0},
      {"sphere-proj", 100, 5.12, 256.0, {"sum_first_half", "sum_second_half"}, 0.0, 100.0},
      {"rastrigin-proj", 100, 5.12, 256.0, {"sum_first_half", "sum_second_half"}, 0.0, 100.0},
  };
  return list;
}

}  // namespace

TEST_CASE("the registry finds every shipped plugin", "[registry]") {
  use_plugin_path(kPluginDir);
  const auto entries = tessera::discover_plugins();
  for (const auto& s : shipped()) {
    INFO(s.name);
    bool found = false;
    for (const auto& e : entries) {
      if (e.name != s.name) continue;
      found = true;
      CHECK(e.error.empty());
      CHECK(e.abi_version == TSR_ABI_VERSION);
      CHECK(fs::equivalent(e.path, plugin_file(kPluginDir, s.name)));
    }
    CHECK(found);
  }
  // Naming the build folder twice lists each file once: nothing in it is reported as shadowed.
  use_plugin_path(kPluginDir + ":" + kPluginDir + "/../plugins/");
  for (const auto& e : tessera::discover_plugins())
    if (fs::equivalent(fs::path(e.path).parent_path(), kPluginDir)) CHECK(e.error.empty());
}

TEST_CASE("shipped plugins describe the problems of the README", "[registry]") {
  use_plugin_path(kPluginDir);
  for (const auto& s : shipped()) {
    INFO(s.name);
    const auto problem = tessera::open_plugin_problem(s.name, "");
    const auto& info = problem->info();
    CHECK(info.name == s.name);
    CHECK(info.abi_version == TSR_ABI_VERSION);
    CHECK(fs::equivalent(info.origin, plugin_file(kPluginDir, s.name)));
    REQUIRE(info.genome_size() == s.genome_size);
    for (std::size_t i = 0; i < s.genome_size; ++i) {
      CHECK(info.genome.lower[i] == -s.genome_bound);
      CHECK(info.genome.upper[i] == s.genome_bound);
    }
    REQUIRE(info.descriptor_size() == 2);
    CHECK(info.descriptor_names == s.descriptor_names);
    for (std::size_t i = 0; i < 2; ++i) {
      CHECK(info.descriptor.lower[i] == Approx(-s.descriptor_bound).epsilon(1e-15));
      CHECK(info.descriptor.upper[i] == Approx(s.descriptor_bound).epsilon(1e-15));
    }
    CHECK(info.fitness_lower == Approx(s.fitness_lower).epsilon(1e-15));
    CHECK(info.fitness_upper == Approx(s.fitness_upper).epsilon(1e-15));
    CHECK(info.extra_names.empty());
  }
}

TEST_CASE("plugin output is bit-identical to the in-process model", "[bits]") {
  use_plugin_path(kPluginDir);
  std::mt19937_64 rng(7);
  for (const auto& s : shipped()) {
    INFO(s.name);
    const auto problem = tessera::open_plugin_problem(s.name, "");
    auto instance = problem->make_instance();
    auto second = problem->make_instance();  // a fresh instance, not the one made while loading
    const std::size_t n = s.genome_size, count = 500;
    tessera::Batch batch;
    batch.resize(count, n, 2, 0);
    // Slightly beyond the bounds too, where the projections' clipping rule applies.
    std::uniform_real_distribution<double> uniform(-1.5 * s.genome_bound, 1.5 * s.genome_bound);
    for (double& v : batch.genomes) v = uniform(rng);
    // Uneven chunks through two instances: each chunk must land at its own rows.
    instance->evaluate(batch, 0, 7);
    second->evaluate(batch, 7, 250);
    instance->evaluate(batch, 257, count - 257);
    std::size_t mismatches = 0;
    for (std::size_t k = 0; k < count; ++k) {
      double fitness = 0, descriptor[2];
      model_evaluate(s.name, batch.genomes.data() + k * n, n, fitness, descriptor);
      if (!same_bits(fitness, batch.fitness[k]) ||
          !same_bits(descriptor[0], batch.descriptors[2 * k]) ||
          !same_bits(descriptor[1], batch.descriptors[2 * k + 1]) || batch.valid[k] != 1)
        ++mismatches;
    }
    CHECK(mismatches == 0);
  }
}

TEST_CASE("MAP-Elites archives are bit-identical with the plugin and in-process", "[bits]") {
  // The shipped problems as plugins give the same archives as in-process versions.
  use_plugin_path(kPluginDir);
  for (const auto& s : shipped()) {
    INFO(s.name);
    const auto problem = tessera::open_plugin_problem(s.name, "");
    const auto& info = problem->info();
    auto run = [&](tessera::EvaluateFn evaluate) {
      tessera::SearchSettings settings;
      settings.seed = 11;
      settings.batch = 64;
      settings.evaluations = 64 * 30;
      auto space = std::make_shared<tessera::GridSpace>(info.descriptor, info.descriptor_names,
                                                        std::vector<std::int64_t>{20, 20});
      tessera::MapElitesSearch search(
          settings, space, info.genome, info.fitness_lower,
          std::make_unique<tessera::VariationEmitter>(tessera::VariationSettings{}),
          std::move(evaluate));
      while (!search.finished()) search.step();
      tessera::ArchiveSnapshot snapshot;
      search.save(snapshot);
      return snapshot;
    };
    tessera::ThreadEvaluator evaluator(problem, 2);
    const auto plugin = run([&](tessera::Batch& b) { evaluator.evaluate(b); });
    const auto local = run([&](tessera::Batch& b) {
      for (std::size_t k = 0; k < b.count; ++k) {
        model_evaluate(s.name, b.genomes.data() + k * b.genome_size, b.genome_size, b.fitness[k],
                       b.descriptors.data() + k * b.descriptor_size);
        b.valid[k] = 1;
      }
    });
    REQUIRE(plugin.elite_count() > 10);
    CHECK(plugin.cell == local.cell);
    CHECK(plugin.birth == local.birth);
    CHECK(std::memcmp(plugin.genome.data(), local.genome.data(),
                      plugin.genome.size() * sizeof(double)) == 0);
    CHECK(std::memcmp(plugin.fitness.data(), local.fitness.data(),
                      plugin.fitness.size() * sizeof(double)) == 0);
    CHECK(std::memcmp(plugin.descriptor.data(), local.descriptor.data(),
                      plugin.descriptor.size() * sizeof(double)) == 0);
    REQUIRE(plugin.history.size() == local.history.size());
    CHECK(same_bits(plugin.history.back().qd_score, local.history.back().qd_score));
  }
}

TEST_CASE("plugin options are read with toml++ and checked", "[options]") {
  use_plugin_path(kPluginDir);
  const std::string arm_file = plugin_file(kPluginDir, "arm");
  SECTION("arm joints") {
    const auto problem = tessera::open_plugin_problem("arm", "joints = 3\n");
    CHECK(problem->info().genome_size() == 3);
    auto instance = problem->make_instance();
    tessera::Batch batch;
    batch.resize(1, 3, 2, 0);
    batch.genomes = {0.0, std::numbers::pi / 2, 0.0};  // tip at (1/3, 2/3)
    instance->evaluate(batch, 0, 1);
    CHECK(batch.descriptors[0] == Approx(1.0 / 3).epsilon(1e-14));
    CHECK(batch.descriptors[1] == Approx(2.0 / 3).epsilon(1e-14));
  }
  SECTION("projection dimensions set the genome and descriptor bounds") {
    const auto problem = tessera::open_plugin_problem("sphere-proj", "dimensions = 10");
    CHECK(problem->info().genome_size() == 10);
    CHECK(problem->info().descriptor.upper[0] == Approx(25.6).epsilon(1e-15));
  }
  SECTION("projection genome_bound widens the genome box, where parameters fold back") {
    const auto problem =
        tessera::open_plugin_problem("rastrigin-proj", "dimensions = 4\ngenome_bound = 10.24");
    const auto& info = problem->info();
    for (std::size_t i = 0; i < 4; ++i) {
      CHECK(info.genome.lower[i] == -10.24);
      CHECK(info.genome.upper[i] == 10.24);
    }
    CHECK(info.descriptor.upper[0] == Approx(10.24).epsilon(1e-15));  // still 2 x 5.12
    auto instance = problem->make_instance();
    tessera::Batch batch;
    batch.resize(1, 4, 2, 0);
    // Hand-computed with the published clip (5.12 / x past 5.12, from memory): 10.24 -> 0.5,
    // -6.4 -> -0.8; 5.12 and -1 stay.
    batch.genomes = {10.24, 5.12, -6.4, -1.0};
    instance->evaluate(batch, 0, 1);
    CHECK(batch.descriptors[0] == Approx(5.62).epsilon(1e-14));
    CHECK(batch.descriptors[1] == Approx(-1.8).epsilon(1e-14));
    CHECK(contains(
        input_error_of([] { tessera::open_plugin_problem("sphere-proj", "genome_bound = 5.0"); }),
        "'genome_bound'"));
  }
  SECTION("bad options are refused naming the plugin file and quoting its reason") {
    const std::string unknown =
        input_error_of([] { tessera::open_plugin_problem("arm", "jionts = 3"); });
    CHECK(contains(unknown, arm_file));
    CHECK(contains(unknown, "unknown option 'jionts'"));
    const std::string zero =
        input_error_of([] { tessera::open_plugin_problem("arm", "joints = 0"); });
    CHECK(contains(zero, arm_file));
    CHECK(contains(zero, "'joints'"));
    CHECK(contains(input_error_of([] { tessera::open_plugin_problem("arm", "joints = 'ten'"); }),
                   "must be an integer"));
    CHECK(contains(input_error_of([] { tessera::open_plugin_problem("arm", "joints = = 3"); }),
                   "not valid TOML"));
    CHECK(contains(
        input_error_of([] { tessera::open_plugin_problem("rastrigin-proj", "dimensions = 1"); }),
        "'dimensions'"));
    for (const auto& message : {unknown, zero}) CHECK(message.find('\n') == std::string::npos);
  }
}

TEST_CASE("an unknown problem name lists the available ones", "[registry]") {
  use_plugin_path(kPluginDir);
  const std::string message =
      input_error_of([] { tessera::open_plugin_problem("no-such-problem", ""); });
  CHECK(contains(message, "no-such-problem"));
  for (const auto& s : shipped()) CHECK(contains(message, s.name));
}

TEST_CASE("faulty plugin files are refused with a message naming the file", "[refusal]") {
  use_plugin_path(kBadDir + ":" + kPluginDir);
  const auto entries = tessera::discover_plugins();
  auto entry_of = [&](const std::string& name) {
    for (const auto& e : entries)
      if (e.name == name) return e;
    FAIL("no entry for " << name);
    return tessera::PluginEntry{};
  };
  SECTION("wrong ABI version") {
    const std::string file = plugin_file(kBadDir, "bad-abi");
    CHECK(contains(entry_of("bad-abi").error, "ABI version 42"));
    const std::string message = input_error_of([] { tessera::open_plugin_problem("bad-abi", ""); });
    CHECK(message.rfind(file + ": ", 0) == 0);
    CHECK(contains(message, "ABI version 42"));
  }
  SECTION("missing symbol") {
    const std::string file = plugin_file(kBadDir, "bad-missing");
    CHECK(contains(entry_of("bad-missing").error, "tsr_evaluate"));
    const std::string message = input_error_of([&] { tessera::load_plugin_problem(file, ""); });
    CHECK(message.rfind(file + ": ", 0) == 0);
    CHECK(contains(message, "missing symbol(s) tsr_evaluate"));
  }
  SECTION("inconsistent metadata: lower >= upper") {
    const std::string file = plugin_file(kBadDir, "bad-bounds");
    const std::string message =
        input_error_of([] { tessera::open_plugin_problem("bad-bounds", ""); });
    CHECK(message.rfind(file + ": ", 0) == 0);
    CHECK(contains(message, "lower >= upper"));
  }
  SECTION("inconsistent metadata: no descriptor names") {
    const std::string file = plugin_file(kBadDir, "bad-null-names");
    const std::string message =
        input_error_of([] { tessera::open_plugin_problem("bad-null-names", ""); });
    CHECK(message.rfind(file + ": ", 0) == 0);
    CHECK(contains(message, "descriptor names are missing"));
  }
  SECTION("a file that is no shared library") {
    const fs::path dir = fs::temp_directory_path() / ("tessera-junk-" + std::to_string(getpid()));
    fs::create_directories(dir);
    const std::string file = (dir / "tessera-plugin-junk.so").string();
    {
      std::FILE* f = std::fopen(file.c_str(), "w");
      std::fputs("not an ELF file\n", f);
      std::fclose(f);
    }
    const std::string message = input_error_of([&] { tessera::load_plugin_problem(file, ""); });
    CHECK(message.rfind(file + ": cannot be loaded", 0) == 0);
    CHECK(message.find('\n') == std::string::npos);
    fs::remove_all(dir);
  }
  SECTION("the good plugins on the same path still load") {
    CHECK(entry_of("arm").error.empty());
    CHECK(tessera::open_plugin_problem("arm", "")->info().genome_size() == 10);
  }
}

TEST_CASE("plugin create and evaluate errors reach the caller as text", "[refusal]") {
  use_plugin_path(kBadDir);
  const std::string file = plugin_file(kBadDir, "bad-runtime");
  const std::string message =
      input_error_of([] { tessera::open_plugin_problem("bad-runtime", "anything = 1"); });
  CHECK(message.rfind(file + ": ", 0) == 0);
  CHECK(contains(message, "the fixture takes no options"));
  const auto problem = tessera::open_plugin_problem("bad-runtime", "");
  auto instance = problem->make_instance();
  tessera::Batch batch;
  batch.resize(4, 2, 1, 0);
  try {
    instance->evaluate(batch, 0, 4);
    FAIL("a TSR_ERROR from the plugin must throw");
  } catch (const std::runtime_error& e) {
    CHECK(contains(e.what(), "the fixture fails every batch"));
  }
}

TEST_CASE("a second file providing the same problem is reported as shadowed", "[registry]") {
  const fs::path dir = fs::temp_directory_path() / ("tessera-shadow-" + std::to_string(getpid()));
  fs::create_directories(dir);
  fs::copy_file(plugin_file(kPluginDir, "arm"), dir / "tessera-plugin-arm-copy.so");
  use_plugin_path(kPluginDir + ":" + dir.string());
  std::size_t providers = 0, shadowed = 0;
  for (const auto& e : tessera::discover_plugins()) {
    if (e.name != "arm") continue;
    ++providers;
    if (contains(e.error, "already provided by")) ++shadowed;
  }
  CHECK(providers == 2);
  CHECK(shadowed == 1);
  // The first on the path wins.
  CHECK(fs::equivalent(tessera::open_plugin_problem("arm", "")->info().origin,
                       plugin_file(kPluginDir, "arm")));
  fs::remove_all(dir);
}

TEST_CASE("a run loads the plugins up to its problem's first provider, no further", "[registry]") {
  // The first provider on the path wins (registry.hpp), so later files cannot change what a run
  // opens; not loading them keeps other plugins' libraries out of a run's start.
  use_plugin_path(kPluginDir);
  const auto all = tessera::discover_plugins();
  const auto up_to_arm = tessera::discover_plugins("arm");
  REQUIRE(!up_to_arm.empty());
  CHECK(up_to_arm.back().name == "arm");
  CHECK(up_to_arm.size() < all.size());  // the files sorted after it (gait, linkage, ...) stay
  for (std::size_t i = 0; i < up_to_arm.size(); ++i) CHECK(up_to_arm[i].path == all[i].path);

  // An earlier folder's file providing the name under another file name is the one opened.
  const fs::path dir = fs::temp_directory_path() / ("tessera-first-" + std::to_string(getpid()));
  fs::create_directories(dir);
  fs::copy_file(plugin_file(kPluginDir, "arm"), dir / "tessera-plugin-zz-arm-copy.so");
  use_plugin_path(dir.string() + ":" + kPluginDir);
  const auto entries = tessera::discover_plugins("arm");
  REQUIRE(entries.size() == 1);
  CHECK(fs::equivalent(entries.front().path, dir / "tessera-plugin-zz-arm-copy.so"));
  CHECK(fs::equivalent(tessera::open_plugin_problem("arm", "")->info().origin,
                       dir / "tessera-plugin-zz-arm-copy.so"));
  fs::remove_all(dir);
}
