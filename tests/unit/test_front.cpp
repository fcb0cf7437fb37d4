// Non-dominated fronts against a brute-force O(N^2) dominance check written here from the
// definition (Pareto dominance: at least as good on every objective, strictly better on one;
// common practice, e.g. Deb, Multi-Objective Optimization using Evolutionary Algorithms, 2001).
// Random data with values drawn from a few levels forces ties and exact duplicates.
#include <catch2/catch.hpp>

#include <algorithm>
#include <vector>

#include "core/select/front.hpp"
#include "core/base/rng.hpp"

namespace {

using tessera::Goal;

std::vector<std::size_t> brute_force(const std::vector<double>& v, const std::vector<Goal>& goals) {
  const std::size_t m = goals.size();
  const std::size_t n = v.size() / m;
  std::vector<std::size_t> out;
  for (std::size_t b = 0; b < n; ++b) {
    bool dominated = false;
    for (std::size_t a = 0; a < n && !dominated; ++a) {
      bool no_worse = true, better = false;
      for (std::size_t j = 0; j < m; ++j) {
        const double x = v[a * m + j], y = v[b * m + j];
        const bool a_better = goals[j] == Goal::maximize ? x > y : x < y;
        const bool a_worse = goals[j] == Goal::maximize ? x < y : x > y;
        if (a_worse) no_worse = false;
        if (a_better) better = true;
      }
      dominated = no_worse && better;
    }
    if (!dominated) out.push_back(b);
  }
  return out;
}

std::vector<double> random_values(tessera::Rng& rng, std::size_t n, std::size_t m, int levels) {
  std::vector<double> v(n * m);
  for (auto& x : v)
    x = levels > 0 ? static_cast<double>(rng.below(static_cast<std::uint64_t>(levels))) - 3.0
                   : rng.normal();
  return v;
}

}  // namespace

TEST_CASE("front equals brute-force dominance on random data with ties") {
  tessera::Rng rng(20240611, 1);
  for (std::size_t m : {2, 3, 4}) {
    for (int levels : {0, 3, 6, 40}) {  // 0: continuous values (no ties)
      for (int trial = 0; trial < 25; ++trial) {
        const std::size_t n = 1 + rng.below(300);
        const auto v = random_values(rng, n, m, levels);
        std::vector<Goal> goals(m);
        for (auto& g : goals) g = rng.below(2) ? Goal::maximize : Goal::minimize;
        INFO("objectives " << m << ", levels " << levels << ", n " << n);
        CHECK(tessera::non_dominated(v, goals) == brute_force(v, goals));
      }
    }
  }
}

TEST_CASE("rows equal on every objective stay on the front together") {
  // Three copies of the best point and one dominated point.
  const std::vector<double> v = {1, 1, 1, 1, 0, 1, 1, 1};
  const std::vector<Goal> goals = {Goal::maximize, Goal::maximize};
  CHECK(tessera::non_dominated(v, goals) == std::vector<std::size_t>{0, 1, 3});
  const std::vector<double> w = {1, 1, 1, 1, 1, 1, 0, 1, 1};
  const std::vector<Goal> three = {Goal::maximize, Goal::maximize, Goal::maximize};
  CHECK(tessera::non_dominated(w, three) == std::vector<std::size_t>{0, 1});
}

TEST_CASE("a large two-objective front matches brute force") {
  tessera::Rng rng(7, 2);
  // Points near a circle arc: many of them non-dominated.
  std::vector<double> v;
  for (int i = 0; i < 3000; ++i) {
    const double a = rng.uniform(0.0, 1.5707963);
    const double r = 1.0 - 0.05 * rng.uniform();
    v.push_back(std::round(r * std::cos(a) * 1000) / 1000);
    v.push_back(std::round(r * std::sin(a) * 1000) / 1000);
  }
  const std::vector<Goal> goals = {Goal::maximize, Goal::maximize};
  const auto front = tessera::non_dominated(v, goals);
  CHECK(front == brute_force(v, goals));
  CHECK(front.size() > 20);
}

TEST_CASE("elite_front sorts by the first objective, best first") {
  tessera::ArchiveSnapshot s;
  s.descriptor_bounds = {{0.0}, {1.0}};
  s.descriptor_names = {"x"};
  s.fitness = {1.0, 3.0, 2.0, 0.5, 3.0};
  s.descriptor = {0.9, 0.1, 0.5, 0.95, 0.1};
  s.cell = {0, 1, 2, 3, 4};
  const std::vector<std::size_t> rows = {0, 1, 2, 3, 4};
  const std::vector<tessera::Objective> objectives = {{true, 0, Goal::maximize},
                                                      {false, 0, Goal::maximize}};
  // Row 1 and row 4 tie on both objectives: both stay, lower row first.
  CHECK(tessera::elite_front(s, rows, objectives) == std::vector<std::size_t>{1, 4, 2, 0, 3});
  const std::vector<tessera::Objective> minimise_x = {{false, 0, Goal::minimize},
                                                      {true, 0, Goal::maximize}};
  CHECK(tessera::elite_front(s, rows, minimise_x) == std::vector<std::size_t>{1, 4});
}
