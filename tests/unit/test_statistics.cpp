// The statistics of `tessera compare`: Mann-Whitney U and Fisher's exact test against scipy
// (tests/reference/rank_tests.py, Debian python3-scipy), Holm's correction on worked examples,
// Vargha-Delaney A12 on hand-computed cases, and the comparison over a table of observations.
#include <unistd.h>

#include <catch2/catch.hpp>

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "core/stats/comparison.hpp"
#include "core/stats/effect_size.hpp"
#include "core/stats/fisher_exact.hpp"
#include "core/stats/holm.hpp"
#include "core/stats/mann_whitney.hpp"

using namespace tessera;

namespace {

// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014): inputs independent of the project's generator.
struct Mix {
  std::uint64_t state;
  std::uint64_t next() {
    std::uint64_t z = (state += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
  }
  double uniform() { return static_cast<double>(next() >> 11) * 0x1.0p-53; }
  double normal() {  // Box-Muller
    const double u = 1.0 - uniform(), v = uniform();
    return std::sqrt(-2.0 * std::log(u)) * std::cos(6.283185307179586 * v);
  }
};

std::string text(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

std::vector<std::vector<double>> run_reference(const std::vector<std::string>& cases) {
  namespace fs = std::filesystem;
  const fs::path in = fs::temp_directory_path() / ("tessera-rank-" + std::to_string(::getpid()));
  {
    std::ofstream out(in);
    for (const auto& c : cases) out << c << "\n";
  }
  const std::string out = in.string() + ".out";
  const std::string cmd = "/usr/bin/python3 " + std::string(TESSERA_SOURCE_DIR) +
                          "/tests/reference/rank_tests.py " + in.string() + " > " + out;
  REQUIRE(std::system(cmd.c_str()) == 0);
  std::ifstream result(out);
  std::vector<std::vector<double>> rows;
  for (std::string line; std::getline(result, line);) {
    std::vector<double> row;
    std::size_t pos = 0;
    while (pos < line.size()) {
      std::size_t used = 0;
      row.push_back(std::stod(line.substr(pos), &used));
      pos += used;
      while (pos < line.size() && line[pos] == ' ') ++pos;
    }
    rows.push_back(row);
  }
  fs::remove(in);
  fs::remove(out);
  return rows;
}

struct Case {
  std::vector<double> x, y;
};

std::string mwu_line(const Case& c) {
  std::string s = "mwu " + std::to_string(c.x.size());
  for (double v : c.x) s += " " + text(v);
  for (double v : c.y) s += " " + text(v);
  return s;
}

}  // namespace

TEST_CASE("Mann-Whitney U equals scipy.stats.mannwhitneyu: exact, asymptotic, ties, n 3..50") {
  Mix mix{20260512};
  std::vector<Case> cases;
  // Exact region (scipy: one sample of at most 8, no ties), both orders of the sizes.
  for (std::size_t n1 : {3, 4, 5, 7, 8})
    for (std::size_t n2 : {3, 6, 8, 20, 50, 120}) {
      for (double shift : {0.0, 0.8, 3.0}) {
        Case c;
        for (std::size_t i = 0; i < n1; ++i) c.x.push_back(mix.normal() + shift);
        for (std::size_t i = 0; i < n2; ++i) c.y.push_back(mix.normal());
        cases.push_back(c);
        cases.push_back({c.y, c.x});
      }
    }
  // Asymptotic: both samples above 8, continuous values.
  for (std::size_t n1 : {9, 15, 30, 50})
    for (std::size_t n2 : {9, 23, 50})
      for (double shift : {0.0, 0.5, 1.5, 4.0}) {
        Case c;
        for (std::size_t i = 0; i < n1; ++i) c.x.push_back(mix.normal() + shift);
        for (std::size_t i = 0; i < n2; ++i) c.y.push_back(mix.normal());
        cases.push_back(c);
      }
  // Ties: small samples with ties go asymptotic too; heavy ties; all values equal.
  for (std::size_t n1 : {3, 5, 12, 40})
    for (std::size_t n2 : {4, 8, 25, 50})
      for (double shift : {0.0, 1.0, 2.5}) {
        Case c;
        for (std::size_t i = 0; i < n1; ++i) c.x.push_back(std::round(mix.normal() + shift));
        for (std::size_t i = 0; i < n2; ++i) c.y.push_back(std::round(mix.normal()));
        cases.push_back(c);
      }
  cases.push_back({{1, 1, 1}, {1, 1, 1, 1}});
  cases.push_back({{0, 0, 1, 1, 1}, {0, 0, 0, 0, 1, 1}});  // binary data
  // Tiny p: fully separated 8 vs 50 (exact, 2 / C(58, 8)), and U = 2270 of 2500 for 50 vs 50
  // (asymptotic p about 1e-12), and full separation of 50 vs 50 (about 1e-17).
  {
    Case c;
    for (int i = 0; i < 8; ++i) c.x.push_back(100.0 + i);
    for (int i = 0; i < 50; ++i) c.y.push_back(i * 0.5);
    cases.push_back(c);
  }
  {
    Case c;
    for (int j = 0; j < 50; ++j) c.y.push_back(2.0 * j);
    for (int i = 0; i < 45; ++i) c.x.push_back(1000.0 + i);     // above all 50 y: 2250
    for (int i = 0; i < 5; ++i) c.x.push_back(7.0 + 0.01 * i);  // above y = 0, 2, 4, 6: 4 each
    cases.push_back(c);
    Case d;
    for (int i = 0; i < 50; ++i) d.x.push_back(1000.0 + i), d.y.push_back(i);
    cases.push_back(d);
  }
  std::vector<std::string> lines;
  for (const Case& c : cases) lines.push_back(mwu_line(c));
  const auto reference = run_reference(lines);
  REQUIRE(reference.size() == cases.size());
  std::size_t exact = 0, asymptotic = 0, tiny = 0;
  for (std::size_t k = 0; k < cases.size(); ++k) {
    INFO("case " << k << ": " << lines[k]);
    const MannWhitneyResult r = mann_whitney_u(cases[k].x, cases[k].y);
    REQUIRE(reference[k].size() == 2);
    CHECK(r.u == reference[k][0]);
    CHECK(r.p == Approx(reference[k][1]).epsilon(1e-9).margin(0));
    (r.method == MannWhitneyMethod::exact ? exact : asymptotic) += 1;
    if (reference[k][1] < 1e-11 && reference[k][1] > 1e-13) ++tiny;
  }
  // The cases reach both methods and a p-value near 1e-12.
  CHECK(exact >= 40);
  CHECK(asymptotic >= 40);
  CHECK(tiny >= 1);
}

TEST_CASE("Mann-Whitney U on the worked example of scipy's documentation") {
  // scipy.stats.mannwhitneyu docstring (after Shier 2004): males 19 22 16 29 24, females
  // 20 11 17 12: U = 17, exact two-sided p = 0.1111111111111111 (= 14 / 126).
  const std::vector<double> males = {19, 22, 16, 29, 24}, females = {20, 11, 17, 12};
  const MannWhitneyResult r = mann_whitney_u(males, females);
  CHECK(r.u == 17.0);
  CHECK(r.method == MannWhitneyMethod::exact);
  CHECK(r.p == Approx(14.0 / 126.0).epsilon(1e-14));
  // Full separation of 8 and 50: 2 / C(58, 8) = 2 / 1916797311.
  CHECK(mann_whitney_exact_p(0, 8, 50) == Approx(2.0 / 1916797311.0).epsilon(1e-14));
  CHECK(mann_whitney_exact_p(400, 50, 8) == Approx(2.0 / 1916797311.0).epsilon(1e-14));
  CHECK(mann_whitney_exact_p(12, 4, 6) == 1.0);  // U at the centre: clipped to 1
  CHECK_THROWS(mann_whitney_u(std::vector<double>{}, females));
  CHECK_THROWS(mann_whitney_u(std::vector<double>{std::nan("")}, females));
}

TEST_CASE("Fisher's exact test equals scipy.stats.fisher_exact") {
  Mix mix{77};
  std::vector<std::vector<std::uint64_t>> tables = {
      {8, 2, 1, 5}, {0, 5, 5, 0}, {3, 3, 3, 3}, {0, 0, 4, 6},   {10, 0, 0, 10}, {1, 9, 11, 3},
      {5, 0, 0, 5}, {0, 3, 0, 4}, {6, 4, 2, 8}, {20, 0, 0, 20}, {25, 25, 0, 50}};
  for (int i = 0; i < 60; ++i) {
    std::vector<std::uint64_t> t;
    for (int j = 0; j < 4; ++j) t.push_back(mix.next() % 21);
    tables.push_back(t);
  }
  std::vector<std::string> lines;
  for (const auto& t : tables)
    lines.push_back("fisher " + std::to_string(t[0]) + " " + std::to_string(t[1]) + " " +
                    std::to_string(t[2]) + " " + std::to_string(t[3]));
  const auto reference = run_reference(lines);
  REQUIRE(reference.size() == tables.size());
  for (std::size_t k = 0; k < tables.size(); ++k) {
    INFO(lines[k]);
    const auto& t = tables[k];
    CHECK(fisher_exact_p(t[0], t[1], t[2], t[3]) == Approx(reference[k][0]).epsilon(1e-9));
  }
  // Fisher's tea-tasting design (Fisher, The Design of Experiments, 1935): 4 of 4 cups right,
  // two-sided p = 2 / 70 (from memory: one table of the C(8, 4) = 70 is that extreme per side).
  CHECK(fisher_exact_p(4, 0, 0, 4) == Approx(2.0 / 70.0).epsilon(1e-14));
}

TEST_CASE("Holm's step-down correction on worked examples") {
  // Wikipedia, "Holm-Bonferroni method", example (from memory): p = 0.01, 0.04, 0.03, 0.005 at
  // alpha 0.05 rejects H1 and H4 only. By Holm's definition (Scand. J. Statistics 1979), sorted
  // 0.005 0.01 0.03 0.04 times 4 3 2 1 = 0.02 0.03 0.06 0.04, running maximum 0.02 0.03 0.06 0.06.
  const auto a = holm_adjust({0.01, 0.04, 0.03, 0.005});
  CHECK(a[0] == Approx(0.03));
  CHECK(a[1] == Approx(0.06));
  CHECK(a[2] == Approx(0.06));
  CHECK(a[3] == Approx(0.02));
  // By hand: capped at 1, NaN left out of the family (m = 3): 0.2*3 = 0.6, 0.5*2 = 1.0, 0.9.
  const auto b = holm_adjust({0.5, std::nan(""), 0.2, 0.9});
  CHECK(b[2] == Approx(0.6));
  CHECK(b[0] == Approx(1.0));
  CHECK(b[3] == Approx(1.0));
  CHECK(std::isnan(b[1]));
  // One test: unchanged.
  CHECK(holm_adjust({0.013})[0] == 0.013);
}

TEST_CASE("Vargha-Delaney A12 on hand-computed cases") {
  // {1,2,3} vs {2,4}: pairs won by x: (3,2) = 1; tied: (2,2) = 1/2; of 6: A = 1.5/6 = 0.25.
  CHECK(vargha_delaney_a12(std::vector<double>{1, 2, 3}, std::vector<double>{2, 4}) == 0.25);
  CHECK(vargha_delaney_a12(std::vector<double>{5, 6}, std::vector<double>{1, 2, 3}) == 1.0);
  CHECK(vargha_delaney_a12(std::vector<double>{1, 1}, std::vector<double>{1}) == 0.5);
  // {1,2,3,4} vs {1,2,3,4}: 6 wins + 4 ties / 2 = 8 of 16 = 0.5.
  CHECK(vargha_delaney_a12(std::vector<double>{1, 2, 3, 4}, std::vector<double>{4, 3, 2, 1}) ==
        0.5);
  // Thresholds of Vargha & Delaney (2000): 0.56 / 0.64 / 0.71, symmetric around 0.5.
  CHECK(a12_magnitude(0.5) == "negligible");
  CHECK(a12_magnitude(0.55) == "negligible");
  CHECK(a12_magnitude(0.56) == "small");
  CHECK(a12_magnitude(0.44) == "small");
  CHECK(a12_magnitude(0.64) == "medium");
  CHECK(a12_magnitude(0.36) == "medium");
  CHECK(a12_magnitude(0.70) == "medium");
  CHECK(a12_magnitude(0.71) == "large");
  CHECK(a12_magnitude(0.29) == "large");
  CHECK(a12_magnitude(0.0) == "large");
  CHECK(std::isnan(vargha_delaney_a12(std::vector<double>{}, std::vector<double>{1})));
}

TEST_CASE("comparison over a table: summaries, missing runs, pairs, success, curves") {
  ObservationTable t;
  const auto add = [&](const std::string& g, const std::string& run, const std::string& m,
                       std::optional<double> v, bool censored = false) {
    t.finals.push_back({g, run, m, v, censored});
  };
  // Group a: 1..5; b: 6..9 and one missing run; c: no value at all.
  for (int i = 1; i <= 5; ++i) add("a", "s" + std::to_string(i), "area", i);
  for (int i = 6; i <= 9; ++i) add("b", "s" + std::to_string(i), "area", i);
  add("b", "s10", "area", std::nullopt);
  add("c", "s1", "area", std::nullopt);
  for (int i = 0; i < 6; ++i) add("a", "s" + std::to_string(i), "success", i < 5 ? 1.0 : 0.0);
  for (int i = 0; i < 6; ++i) add("b", "s" + std::to_string(i), "success", i < 1 ? 1.0 : 0.0);
  const ComparisonResult r = compare_groups(t, {});
  REQUIRE(r.groups == std::vector<std::string>{"a", "b", "c"});
  REQUIRE(r.measures.size() == 2);
  const MeasureComparison& area = r.measures[0];
  CHECK_FALSE(area.binary);
  CHECK(area.groups[0].n == 5);
  CHECK(area.groups[0].median == 3.0);
  CHECK(area.groups[1].n == 4);
  CHECK(area.groups[1].n_missing == 1);
  CHECK(area.groups[1].median == 7.5);  // numpy.percentile([6,7,8,9], 50)
  CHECK(area.groups[2].n == 0);
  CHECK(std::isnan(area.groups[2].median));  // missing, not zero
  REQUIRE(area.pairs.size() == 3);
  // a vs b: full separation, exact (4 <= 8, no ties): U = 0, p = 2 / C(9, 4) = 2 / 126.
  CHECK(area.pairs[0].u == 0.0);
  CHECK(area.pairs[0].p == Approx(2.0 / 126.0));
  CHECK(area.pairs[0].a12 == 0.0);
  CHECK(area.pairs[0].magnitude == "large");
  // The pairs with c cannot be tested: NaN, outside Holm's family (m = 1, p_holm = p).
  CHECK(std::isnan(area.pairs[1].p));
  CHECK(area.pairs[0].p_holm == area.pairs[0].p);
  const MeasureComparison& success = r.measures[1];
  CHECK(success.binary);
  CHECK(success.groups[0].successes == 5);
  CHECK(success.pairs[0].test == "fisher exact");
  // 5/6 against 1/6: two-sided p = 0.0800865... (scipy.stats.fisher_exact([[5,1],[1,5]])).
  CHECK(success.pairs[0].p == Approx(fisher_exact_p(5, 1, 1, 5)));
  CHECK(success.pairs[0].p == Approx(0.08008658008658).epsilon(1e-9));

  // Curves: a run's value at a checkpoint is its last record at or before it.
  ObservationTable c;
  for (int run = 0; run < 6; ++run)
    for (std::uint64_t e = 100; e <= 1000; e += 100) {
      c.curves.push_back({"ref", "r" + std::to_string(run), "coverage", e, 0.001 * e + run * 1e-4});
      c.curves.push_back(
          {"fast", "f" + std::to_string(run), "coverage", e, 0.002 * e + run * 1e-4});
    }
  ComparisonOptions o;
  o.reference = "ref";
  const ComparisonResult cr = compare_groups(c, o);
  REQUIRE(cr.curves.size() == 1);
  const CurveComparison& cv = cr.curves[0];
  CHECK(cv.checkpoints.size() == 10);
  CHECK(cv.groups[0].median[0] == Approx(0.1 + 2.5e-4));
  // fast > ref at every checkpoint: 6 vs 6 fully separated, exact p = 2 / 924 each, Holm over
  // 10 checkpoints: 10 * 2 / 924 = 0.0216 < 0.05, so every checkpoint is marked.
  CHECK(cv.marks.size() == 10);
  CHECK(cv.tests.size() == 10);
  CHECK(cv.tests[0].p_holm == Approx(20.0 / 924.0));
  std::vector<CurvePoint> run = {{"g", "r", "m", 10, 1.0}, {"g", "r", "m", 20, 2.0}};
  std::vector<const CurvePoint*> ptrs = {&run[0], &run[1]};
  CHECK(!curve_value_at(ptrs, 5));
  CHECK(*curve_value_at(ptrs, 15) == 1.0);
  CHECK(*curve_value_at(ptrs, 20) == 2.0);
  CHECK(!curve_value_at(ptrs, 21));
  ComparisonOptions bad;
  bad.measures = {"nope"};
  CHECK_THROWS(compare_groups(t, bad));
}
