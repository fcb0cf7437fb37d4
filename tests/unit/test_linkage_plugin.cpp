// The `linkage` plugin through the registry and the C ABI: metadata from the options, results
// identical to the model header, the infeasibility reasons as an extra figure, the transmission
// rule switched on from a run file's options, and refusal of bad options with a one-line reason.
#include <stdlib.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include "core/base/errors.hpp"
#include "core/base/types.hpp"
#include "linkage/linkage_model.hpp"
#include "problems/registry.hpp"

namespace lk = tessera::linkage;

namespace {

std::shared_ptr<tessera::Problem> open_linkage(const std::string& options) {
  setenv("TESSERA_PLUGIN_PATH", TESSERA_PLUGIN_DIR, 1);
  return tessera::open_plugin_problem("linkage", options);
}

// Evaluates genomes through one plugin instance.
tessera::Batch evaluate(const tessera::Problem& problem, const std::vector<double>& genomes) {
  const auto& info = problem.info();
  tessera::Batch batch;
  batch.resize(genomes.size() / info.genome_size(), info.genome_size(), info.descriptor_size(),
               info.extra_names.size());
  batch.genomes = genomes;
  problem.make_instance()->evaluate(batch, 0, batch.count);
  return batch;
}

std::string option_error(const std::string& options) {
  try {
    open_linkage(options);
  } catch (const tessera::InputError& e) {
    return e.what();
  }
  return "";
}

}  // namespace

TEST_CASE("linkage metadata follows the options", "[linkage][plugin]") {
  const auto defaults = open_linkage("");
  const auto& d = defaults->info();
  CHECK(d.name == "linkage");
  REQUIRE(d.genome_size() == lk::kGenomeSize);
  CHECK(d.genome.lower == std::vector<double>{20, 5, 20, 20, 0, -180});
  CHECK(d.genome.upper == std::vector<double>{200, 100, 200, 200, 200, 180});
  CHECK(d.descriptor_names == std::vector<std::string>{"path_width", "path_height"});
  CHECK(d.extra_names == std::vector<std::string>{"infeasible_reason", "mu_min", "mu_max"});
  CHECK(d.fitness_lower == 0.0);
  CHECK(d.fitness_upper == 90.0);
  CHECK(d.summary.find("mm") != std::string::npos);

  const auto custom = open_linkage(
      "units = 'in'\nground = [2, 8]\ncrank = [0.5, 2]\ncoupler = [1, 9]\nrocker = [1.5, 7]\n"
      "point_distance = [0, 5]\npoint_angle = [-90, 90]\npath_width = [0, 12]\n"
      "path_height = [1, 10]\nstraightness = true\nstraightness_max = 0.02\n");
  const auto& c = custom->info();
  CHECK(c.genome.lower == std::vector<double>{2, 0.5, 1, 1.5, 0, -90});
  CHECK(c.genome.upper == std::vector<double>{8, 2, 9, 7, 5, 90});
  CHECK(c.descriptor_names ==
        std::vector<std::string>{"path_width", "path_height", "straightness"});
  CHECK(c.descriptor.lower == std::vector<double>{0, 1, 0});
  CHECK(c.descriptor.upper == std::vector<double>{12, 10, 0.02});
  CHECK(c.extra_names.size() == 5);
  CHECK(c.summary.find("in") != std::string::npos);
}

TEST_CASE("the plugin gives the model's results bit for bit, with reasons", "[linkage][plugin]") {
  const std::string options = "straightness = true\nstraight_share = 0.5\nbranch = 'crossed'\n";
  const auto problem = open_linkage(options);
  lk::Settings settings;
  settings.straightness = true;
  settings.straight_share = 0.5;
  settings.branch = lk::Branch::crossed;
  lk::Evaluator model(settings);

  std::mt19937_64 rng(3);
  const auto& info = problem->info();
  std::vector<double> genomes;
  const std::size_t n = 2000;
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < lk::kGenomeSize; ++j)
      genomes.push_back(
          std::uniform_real_distribution<double>(info.genome.lower[j], info.genome.upper[j])(rng));
  const auto batch = evaluate(*problem, genomes);
  std::size_t seen[6] = {};
  for (std::size_t i = 0; i < n; ++i) {
    const auto e = model.evaluate(genomes.data() + i * lk::kGenomeSize);
    const double* x = batch.extras.data() + i * 5;
    CHECK(x[0] == e.reason);
    ++seen[e.reason];
    CHECK((batch.valid[i] == 1) == (e.reason == lk::kFeasible));
    if (e.reason != lk::kFeasible) {
      CHECK(std::isnan(batch.fitness[i]));
      continue;
    }
    CHECK(std::memcmp(&batch.fitness[i], &e.fitness, sizeof(double)) == 0);
    CHECK(batch.descriptors[3 * i] == e.width);
    CHECK(batch.descriptors[3 * i + 1] == e.height);
    CHECK(batch.descriptors[3 * i + 2] == e.flattest.ratio);
    CHECK(x[1] == e.mu_min_deg);
    CHECK(x[2] == e.mu_max_deg);
    CHECK(x[3] == e.flattest.band);
    CHECK(x[4] == e.flattest.length);
  }
  // Uniform genomes over the default box hit the feasible class and both main rejections.
  CHECK(seen[lk::kFeasible] > 100);
  CHECK(seen[lk::kNotGrashof] > 100);
  CHECK(seen[lk::kCrankNotShortest] > 10);
}

// The 40..140 degree rule (common practice) turned on from the options.
TEST_CASE("transmission_limit = 40 makes the rule a feasibility constraint", "[linkage][plugin]") {
  const auto free = open_linkage("");
  const auto ruled = open_linkage("transmission_limit = 40.0");
  // mu in [54.3, 100.3] (inside) and [38.6, 126.2] (outside); see test_linkage_model.cpp.
  const std::vector<double> genomes = {40, 10, 30, 35, 20, 0, 40, 18, 30, 35, 20, 0};
  const auto f = evaluate(*free, genomes);
  const auto r = evaluate(*ruled, genomes);
  CHECK(f.valid == std::vector<unsigned char>{1, 1});
  CHECK(r.valid == std::vector<unsigned char>{1, 0});
  CHECK(r.extras[3] == static_cast<double>(lk::kTransmission));
  CHECK(r.extras[4] == Approx(38.6).margin(0.1));  // measured even though refused
  CHECK(r.fitness[0] == f.fitness[0]);
}

TEST_CASE("bad linkage options are refused with one line naming the fault", "[linkage][plugin]") {
  const auto has = [](const std::string& text, const std::string& part) {
    INFO(text);
    CHECK(text.find(part) != std::string::npos);
    CHECK(text.find('\n') == std::string::npos);
  };
  has(option_error("crank_length = [1, 2]"), "unknown option 'crank_length'");
  has(option_error("crank = [5, 1]"), "option 'crank'");
  has(option_error("crank = [0, 1]"), "option 'crank'");
  has(option_error("crank = 5"), "must be an array [lower, upper]");
  has(option_error("crank = ['a', 1]"), "must be a number");
  has(option_error("branch = 'sideways'"), "must be one of: open, crossed");
  has(option_error("units = 'furlong'"), "option 'units'");
  has(option_error("samples = 10"), "option 'samples'");
  has(option_error("transmission_limit = 95"), "option 'transmission_limit'");
  has(option_error("straight_share = 0.5"), "needs straightness = true");
  has(option_error("straightness = 'yes'"), "must be true or false");
  has(option_error("straightness = true\nsamples = 40\nstraight_share = 0.05"), "fewer than 3");
  has(option_error("point_angle = [-400, 0]"), "option 'point_angle'");
  has(option_error("ground = [1, 2"), "not valid TOML");
  CHECK(option_error("ground = [1, 2]\ncrank = [0.1, 0.5]") == "");
}
