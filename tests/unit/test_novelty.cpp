// Novelty scores against a brute-force k-nearest-neighbour mean and against scipy's cKDTree,
// local competition by hand, the adaptive archive threshold as stated, NSGA-II ranks and
// crowding distances worked by hand, and quartiles against numpy.percentile.
#include <unistd.h>

#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <utility>
#include <vector>

#include "core/search/novelty.hpp"
#include "core/search/nsga2.hpp"
#include "core/stats/quartiles.hpp"
#include "core/base/rng.hpp"

using namespace tessera;

namespace {

// Brute force: sort every other point by (distance, index), keep k. Scores the rows in
// `queries`, or every row when it is empty.
NeighbourScores brute_force(const std::vector<double>& points, std::size_t dims,
                            const std::vector<double>& fitness, std::size_t k,
                            std::vector<std::size_t> queries = {}) {
  const std::size_t n = points.size() / dims;
  if (queries.empty())
    for (std::size_t q = 0; q < n; ++q) queries.push_back(q);
  NeighbourScores out;
  for (std::size_t q : queries) {
    std::vector<std::pair<double, std::size_t>> others;
    for (std::size_t i = 0; i < n; ++i) {
      if (i == q) continue;
      double s = 0;
      for (std::size_t j = 0; j < dims; ++j)
        s += (points[q * dims + j] - points[i * dims + j]) *
             (points[q * dims + j] - points[i * dims + j]);
      others.push_back({std::sqrt(s), i});
    }
    std::sort(others.begin(), others.end());
    const std::size_t m = std::min(k, others.size());
    double sum = 0, beaten = 0;
    for (std::size_t i = 0; i < m; ++i) {
      sum += others[i].first;
      if (fitness[others[i].second] < fitness[q]) ++beaten;
    }
    out.novelty.push_back(m == 0 ? 0.0 : sum / static_cast<double>(m));
    out.competition.push_back(beaten);
  }
  return out;
}

std::vector<double> random_points(std::size_t n, std::size_t dims, std::uint64_t seed,
                                  bool with_duplicates) {
  Rng rng(seed, 7);
  std::vector<double> p(n * dims);
  for (auto& v : p) v = rng.uniform();
  // Copies of earlier points, and a cluster on one spot: ties at distance 0.
  if (with_duplicates)
    for (std::size_t i = n / 2; i < n; i += 7)
      for (std::size_t j = 0; j < dims; ++j) p[i * dims + j] = p[(i % 5) * dims + j];
  return p;
}

std::vector<std::size_t> all(std::size_t n) {
  std::vector<std::size_t> q(n);
  for (std::size_t i = 0; i < n; ++i) q[i] = i;
  return q;
}

std::vector<double> run_reference(const std::string& script, const std::string& input,
                                  const std::string& args) {
  const std::string out = input + ".out";
  const std::string cmd = "/usr/bin/python3 " + std::string(TESSERA_SOURCE_DIR) +
                          "/tests/reference/" + script + " " + input + " " + args + " > " + out;
  REQUIRE(std::system(cmd.c_str()) == 0);
  std::ifstream in(out);
  std::vector<double> values;
  for (double v; in >> v;) values.push_back(v);
  return values;
}

}  // namespace

TEST_CASE("novelty by hand: k = 2 on a line") {
  // Points 0, 1, 3, 6 (one dimension), k = 2:
  //   0: neighbours 1, 3 -> (1 + 3) / 2 = 2      1: 0, 3 -> (1 + 2) / 2 = 1.5
  //   3: 1, 6 (or 0, both 3 away) -> 2.5        6: 3, 1 -> (3 + 5) / 2 = 4
  // Local competition with fitness 4, 3, 2, 1: each point beats the neighbours of lower
  // fitness: 0 beats 1 and 3 (2); 1 beats 3, not 0 (1); 3 beats none of 1 and 0 (0; ties at
  // distance 3 go to the lower index, 0); 6 beats none (0).
  const std::vector<double> points = {0, 1, 3, 6};
  const std::vector<double> fitness = {4, 3, 2, 1};
  const auto s = score_neighbours(points, 1, fitness, all(4), 2);
  CHECK(s.novelty == std::vector<double>{2.0, 1.5, 2.5, 4.0});
  CHECK(s.competition == std::vector<double>{2, 1, 0, 0});
  // Fewer points than k: the mean over all others; a single point has novelty 0.
  const auto few = score_neighbours(points, 1, fitness, all(4), 15);
  CHECK(few.novelty[0] == Approx(10.0 / 3.0));
  const auto alone =
      score_neighbours(std::vector<double>{5.0}, 1, std::vector<double>{0.0}, all(1), 15);
  CHECK(alone.novelty[0] == 0.0);
}

TEST_CASE("novelty equals the brute-force k-nearest-neighbour mean (tree and scan)") {
  for (std::size_t dims : {1u, 2u, 3u, 5u}) {
    for (std::size_t n : {40u, 700u}) {  // below and above the scan limit
      for (bool dup : {false, true}) {
        const auto points = random_points(n, dims, 11 * dims + n, dup);
        std::vector<double> fitness(n);
        Rng rng(3, n);
        for (auto& f : fitness) f = std::floor(rng.uniform() * 10);  // many fitness ties
        const auto expected = brute_force(points, dims, fitness, 15);
        const auto got = score_neighbours(points, dims, fitness, all(n), 15);
        for (std::size_t i = 0; i < n; ++i) {
          REQUIRE(got.novelty[i] == Approx(expected.novelty[i]).epsilon(1e-12));
          REQUIRE(got.competition[i] == expected.competition[i]);
        }
      }
    }
  }
}

TEST_CASE("novelty equals scipy cKDTree's k-nearest-neighbour mean") {
  namespace fs = std::filesystem;
  const fs::path dir =
      fs::temp_directory_path() / ("tessera-novelty-" + std::to_string(::getpid()));
  fs::create_directories(dir);
  for (std::size_t dims : {2u, 4u}) {
    const std::size_t n = 1500;
    const auto points = random_points(n, dims, 99 + dims, false);
    const std::string input = (dir / ("points" + std::to_string(dims) + ".csv")).string();
    {
      std::ofstream out(input);
      char buf[40];
      for (std::size_t i = 0; i < n; ++i) {
        for (std::size_t j = 0; j < dims; ++j) {
          std::snprintf(buf, sizeof buf, "%.17g", points[i * dims + j]);
          out << (j ? "," : "") << buf;
        }
        out << "\n";
      }
    }
    const auto reference = run_reference("knn_novelty.py", input, "15");
    REQUIRE(reference.size() == n);
    const auto got = score_neighbours(points, dims, std::vector<double>(n, 0.0), all(n), 15);
    for (std::size_t i = 0; i < n; ++i)
      REQUIRE(got.novelty[i] == Approx(reference[i]).epsilon(1e-12));
  }
  fs::remove_all(dir);
}

TEST_CASE("novelty against a growing archive equals brute force over archive and pool") {
  // The archive's index grows in blocks (merged like a binary counter) while the pool is scored
  // beside it: every answer must be the brute-force k nearest (distance, then index) over the
  // archive rows followed by the pool rows, ties and duplicates included, at every size passed
  // on the way (block boundaries at multiples of 64 rows).
  for (std::size_t dims : {2u, 3u}) {
    const Bounds unit{std::vector<double>(dims, 0.0), std::vector<double>(dims, 1.0)};
    NoveltyArchive archive(unit, 1, NoveltySettings{});
    const auto stock = random_points(1600, dims, 5 + dims, true);  // with exact duplicates
    Rng rng(8, dims);
    std::vector<double> stock_fitness(1600);
    for (auto& f : stock_fitness) f = std::floor(rng.uniform() * 4);  // many fitness ties
    std::size_t added = 0;
    for (std::size_t size : {0u, 1u, 63u, 64u, 65u, 191u, 256u, 700u, 1023u, 1100u}) {
      for (; added < size; ++added)
        archive.add(std::vector<double>{0.0}, {stock.data() + added * dims, dims},
                    stock_fitness[added], added);
      for (std::size_t pool_size : {20u, 300u}) {  // below and above the scan limit
        INFO("dims " << dims << ", archive " << size << ", pool " << pool_size);
        // The pool: fresh points and copies of archive rows (ties across the two parts).
        std::vector<double> pool(stock.begin() + 1100 * dims,
                                 stock.begin() + (1100 + pool_size) * dims);
        std::vector<double> pool_fitness(stock_fitness.begin() + 1100,
                                         stock_fitness.begin() + 1100 + pool_size);
        for (std::size_t j = 0; j < pool_size && j < size; j += 3)
          std::copy_n(stock.begin() + j * dims, dims, pool.begin() + j * dims);
        std::vector<double> all_points(stock.begin(), stock.begin() + size * dims);
        all_points.insert(all_points.end(), pool.begin(), pool.end());
        std::vector<double> all_fitness(stock_fitness.begin(), stock_fitness.begin() + size);
        all_fitness.insert(all_fitness.end(), pool_fitness.begin(), pool_fitness.end());
        std::vector<std::size_t> queries;  // every other pool member
        for (std::size_t j = 0; j < pool_size; j += 2) queries.push_back(j);

        const auto got = archive.score_pool(pool, pool_fitness, queries);
        std::vector<std::size_t> rows(queries);
        for (auto& q : rows) q += size;
        const auto expected = brute_force(all_points, dims, all_fitness, 15, rows);
        for (std::size_t j = 0; j < queries.size(); ++j) {
          REQUIRE(got.novelty[j] == Approx(expected.novelty[j]).epsilon(1e-12));
          REQUIRE(got.competition[j] == expected.competition[j]);
        }
      }
    }
  }
}

TEST_CASE("novelty against a growing archive equals scipy cKDTree's k-nearest-neighbour mean") {
  namespace fs = std::filesystem;
  const fs::path dir =
      fs::temp_directory_path() / ("tessera-novelty-growing-" + std::to_string(::getpid()));
  fs::create_directories(dir);
  const std::size_t dims = 2, pool_size = 200;
  const auto stock = random_points(3000, dims, 41, false);  // distinct, as the script assumes
  const Bounds unit{std::vector<double>(dims, 0.0), std::vector<double>(dims, 1.0)};
  NoveltyArchive archive(unit, 1, NoveltySettings{});
  std::size_t added = 0;
  for (std::size_t size : {500u, 1300u, 2800u}) {
    for (; added < size; ++added)
      archive.add(std::vector<double>{0.0}, {stock.data() + added * dims, dims}, 0.0, added);
    const std::vector<double> pool(stock.begin() + 2800 * dims,
                                   stock.begin() + (2800 + pool_size) * dims);
    const std::string input = (dir / ("points" + std::to_string(size) + ".csv")).string();
    {
      std::ofstream out(input);
      char buf[40];
      auto row = [&](const double* p) {
        for (std::size_t j = 0; j < dims; ++j) {
          std::snprintf(buf, sizeof buf, "%.17g", p[j]);
          out << (j ? "," : "") << buf;
        }
        out << "\n";
      };
      for (std::size_t i = 0; i < size; ++i) row(stock.data() + i * dims);
      for (std::size_t j = 0; j < pool_size; ++j) row(pool.data() + j * dims);
    }
    const auto reference = run_reference("knn_novelty.py", input, "15");
    REQUIRE(reference.size() == size + pool_size);
    const auto got = archive.score_pool(pool, std::vector<double>(pool_size, 0.0), all(pool_size));
    for (std::size_t j = 0; j < pool_size; ++j)
      REQUIRE(got.novelty[j] == Approx(reference[size + j]).epsilon(1e-12));
  }
  fs::remove_all(dir);
}

TEST_CASE("the archive threshold adapts to the entry rate as stated") {
  // Lehman & Stanley (EC 2011, from memory): per window, more than 4 entries raise the
  // threshold by 20%, none lowers it by 5%; 1 to 4 entries leave it alone.
  NoveltySettings s;
  s.threshold = 1.0;
  s.window = 100;
  NoveltyArchive a({{0.0, 0.0}, {1.0, 1.0}}, 3, s);
  a.end_batch(100, 5);
  CHECK(a.threshold() == Approx(1.2));
  a.end_batch(100, 4);
  CHECK(a.threshold() == Approx(1.2));
  a.end_batch(100, 0);
  CHECK(a.threshold() == Approx(1.2 * 0.95));
  // A window spans batches: entries of both halves count together.
  a.end_batch(50, 3);
  CHECK(a.threshold() == Approx(1.14));
  CHECK(a.window_entries() == 3);
  a.end_batch(50, 3);
  CHECK(a.threshold() == Approx(1.14 * 1.2));
  CHECK(a.window_evaluations() == 0);
  // Distances use descriptors scaled by the bounds.
  NoveltyArchive b({{-2.0, 0.0}, {2.0, 10.0}}, 1, s);
  b.add(std::vector<double>{0.5}, std::vector<double>{1.0, 5.0}, -1.0, 7);
  CHECK(b.scaled(0)[0] == Approx(0.75));
  CHECK(b.scaled(0)[1] == Approx(0.5));
  CHECK(b.descriptor(0)[0] == 1.0);
  CHECK(b.birth(0) == 7);
}

TEST_CASE("NSGA-II ranks and crowding distances, worked by hand") {
  // Both objectives maximised (Deb et al., IEEE TEVC 2002). A(1,5) B(2,4) C(3,3) D(2,2) E(1,1)
  // F(4,1): nothing dominates A, B, C, F (front 0); B dominates D (front 1); D dominates E
  // (front 2). Crowding in front 0: A and F are extremes on the first objective (inf). B: first
  // objective neighbours A and C, (3 - 1) / (4 - 1) = 2/3; second objective neighbours C and A,
  // (5 - 3) / (5 - 1) = 1/2: 7/6. C: (4 - 2) / 3 = 2/3 plus (4 - 1) / 4 = 3/4: 17/12.
  const std::vector<double> v = {1, 5, 2, 4, 3, 3, 2, 2, 1, 1, 4, 1};
  const Nsga2Ranking r = nsga2_rank(v, 2);
  CHECK(r.rank == std::vector<std::size_t>{0, 0, 0, 1, 2, 0});
  CHECK(std::isinf(r.crowding[0]));
  CHECK(std::isinf(r.crowding[5]));
  CHECK(r.crowding[1] == Approx(7.0 / 6.0));
  CHECK(r.crowding[2] == Approx(17.0 / 12.0));
  // D and E are alone in their fronts: extremes.
  CHECK(std::isinf(r.crowding[3]));
  // Survivors: 5 = front 0 and D; 3 = front 0 cut by crowding: A, F (inf), then C (17/12).
  CHECK(nsga2_survivors(r, 5) == std::vector<std::size_t>{0, 1, 2, 3, 5});
  CHECK(nsga2_survivors(r, 3) == std::vector<std::size_t>{0, 2, 5});
  CHECK(crowded_better(r, 2, 1));
  CHECK(crowded_better(r, 1, 3));
  CHECK_FALSE(crowded_better(r, 3, 1));
}

TEST_CASE("quartiles equal numpy.percentile (linear interpolation)") {
  // numpy's documentation example: percentile([10, 7, 4, 3, 2, 1], 50) = 3.5.
  CHECK(quantile(std::vector<double>{10, 7, 4, 3, 2, 1}, 0.5) == 3.5);
  // By hand, definition 7 on 1, 2, 3, 4: h = 3 p: q1 at h = 0.75 -> 1.75, q3 at 2.25 -> 3.25.
  const Quartiles q = quartiles(std::vector<double>{4, 1, 3, 2});
  CHECK(q.q1 == 1.75);
  CHECK(q.median == 2.5);
  CHECK(q.q3 == 3.25);
  CHECK(std::isnan(quantile(std::vector<double>{}, 0.5)));
  namespace fs = std::filesystem;
  const fs::path file = fs::temp_directory_path() / ("tessera-q-" + std::to_string(::getpid()));
  std::vector<double> sample;
  Rng rng(5, 5);
  for (int i = 0; i < 37; ++i) sample.push_back(std::exp(3 * rng.uniform()) - 4);
  {
    std::ofstream out(file);
    char buf[40];
    for (double v : sample) {
      std::snprintf(buf, sizeof buf, "%.17g", v);
      out << buf << "\n";
    }
  }
  const auto reference = run_reference("quantiles.py", file.string(), "");
  REQUIRE(reference.size() == 3);
  const Quartiles got = quartiles(sample);
  CHECK(got.q1 == Approx(reference[0]).epsilon(1e-14));
  CHECK(got.median == Approx(reference[1]).epsilon(1e-14));
  CHECK(got.q3 == Approx(reference[2]).epsilon(1e-14));
  fs::remove(file);
  fs::remove(file.string() + ".out");
}
