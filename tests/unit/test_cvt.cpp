// CVT descriptor space: quality of the centroids against known optimal quantisers, exact
// nearest-centroid lookup, thread-count determinism, and a cross-check against scikit-learn.
#include <tbb/global_control.h>
#include <unistd.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <numbers>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "core/archive/cvt.hpp"
#include "core/archive/nearest.hpp"

namespace {

using tessera::Bounds;
using tessera::CvtSettings;
using tessera::CvtSpace;

Bounds box(std::size_t dims, double lo, double hi) {
  return {std::vector<double>(dims, lo), std::vector<double>(dims, hi)};
}

std::vector<std::string> names(std::size_t dims) {
  std::vector<std::string> out;
  for (std::size_t i = 0; i < dims; ++i) out.push_back("d" + std::to_string(i));
  return out;
}

// Normalised second moment G = E||x - c(x)||^2 / (d V^(2/d)), V = box volume / K, estimated by
// Monte Carlo over uniform points of the box (definition: Conway & Sloane, IEEE Trans. IT 1982).
// The points come from std::mt19937_64, independent of the samples Tessera clustered.
double second_moment(const CvtSpace& space, std::size_t points, std::uint64_t seed) {
  const Bounds& b = space.bounds();
  const std::size_t dims = b.size();
  std::mt19937_64 gen(seed);
  std::vector<std::uniform_real_distribution<double>> axis;
  double volume = 1.0;
  for (std::size_t d = 0; d < dims; ++d) {
    axis.emplace_back(b.lower[d], b.upper[d]);
    volume *= b.width(d);
  }
  const auto& c = space.centroids();
  std::vector<double> x(dims);
  double sum = 0.0;
  for (std::size_t i = 0; i < points; ++i) {
    for (std::size_t d = 0; d < dims; ++d) x[d] = axis[d](gen);
    const auto cell = static_cast<std::size_t>(space.cell_of(x).cell);
    for (std::size_t d = 0; d < dims; ++d) sum += std::pow(x[d] - c[cell * dims + d], 2);
  }
  const double cell_volume = volume / static_cast<double>(space.cell_count());
  return sum / static_cast<double>(points) /
         (static_cast<double>(dims) * std::pow(cell_volume, 2.0 / static_cast<double>(dims)));
}

// Reference lookup: clamp, then scan every centroid; the first (lowest) index wins ties.
std::int64_t brute_force_cell(const Bounds& b, const std::vector<double>& centroids,
                              std::vector<double> x) {
  const std::size_t dims = b.size();
  for (std::size_t d = 0; d < dims; ++d) x[d] = std::clamp(x[d], b.lower[d], b.upper[d]);
  double best = std::numeric_limits<double>::infinity();
  std::int64_t arg = -1;
  for (std::size_t k = 0; k * dims < centroids.size(); ++k) {
    double s = 0.0;
    for (std::size_t d = 0; d < dims; ++d) s += std::pow(x[d] - centroids[k * dims + d], 2);
    if (s < best) {
      best = s;
      arg = static_cast<std::int64_t>(k);
    }
  }
  return arg;
}

CvtSpace make_space(const Bounds& b, const CvtSettings& s) {
  return CvtSpace(b, names(b.size()), tessera::tessellate_descriptor_box(b, s));
}

// A fresh folder under the system temporary folder, removed at scope exit.
struct TempDir {
  std::filesystem::path path;
  TempDir() {
    std::string pattern = (std::filesystem::temp_directory_path() / "tessera-cvt-XXXXXX").string();
    REQUIRE(::mkdtemp(pattern.data()) != nullptr);
    path = pattern;
  }
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(path, ec);
  }
};

template <class T>
void write_raw(const std::filesystem::path& file, const std::vector<T>& values) {
  std::ofstream out(file, std::ios::binary);
  out.write(reinterpret_cast<const char*>(values.data()),
            static_cast<std::streamsize>(values.size() * sizeof(T)));
  REQUIRE(out.good());
}

}  // namespace

TEST_CASE("1-D CVT of an interval is the optimal uniform quantiser", "[cvt]") {
  // The K-level quantiser minimising mean squared error for a uniform source has equal cells of
  // width 1/K with reproduction points at the midpoints (i + 0.5)/K, and error (1/K)^2 / 12, so
  // G = 1/12 (Panter & Dite 1951; Gersho & Gray, Vector Quantization and Signal Compression 1992).
  // 1-D Lloyd converges slowly from a random start, hence the many iterations. The slowest mode
  // of Lloyd's map also amplifies the sampling noise of the empirical distribution, so centroids
  // are held to a tenth of a cell width rather than to the noise of a single cell mean.
  const Bounds b = box(1, 0.0, 1.0);
  CvtSettings s;
  s.cells = 10;
  s.samples = 200000;
  s.iterations = 300;
  s.seed = 3;
  const CvtSpace space = make_space(b, s);
  std::vector<double> c = space.centroids();
  std::sort(c.begin(), c.end());
  for (std::size_t i = 0; i < c.size(); ++i)
    CHECK(c[i] == Approx((static_cast<double>(i) + 0.5) / 10.0).margin(0.01));
  CHECK(second_moment(space, 400000, 11) == Approx(1.0 / 12.0).epsilon(0.01));
}

TEST_CASE("2-D CVT of the unit square has a near-hexagonal second moment", "[cvt]") {
  // Lower bound: the regular hexagon, G = 5 / (36 sqrt 3) = 0.0801875, the best 2-D cell
  // (Conway & Sloane, IEEE Trans. IT 1982; Gersho 1979). A good CVT of a square lands a few percent
  // above it because of its edge cells; 0.09 (about 12% above) is our acceptance ceiling
  // (common practice).
  const double hexagon = 5.0 / (36.0 * std::sqrt(3.0));
  REQUIRE(hexagon == Approx(0.0801875).epsilon(1e-6));
  CvtSettings s;
  s.cells = 300;
  s.seed = 5;
  for (const Bounds& b : {box(2, 0.0, 1.0), box(2, -2.0, 2.0)}) {
    const CvtSpace space = make_space(b, s);
    const double g = second_moment(space, 400000, 17);
    INFO("G = " << g << " over [" << b.lower[0] << ", " << b.upper[0] << "]^2");
    CHECK(g > hexagon);
    CHECK(g < 0.09);
  }

  // The same measure on the random start (the first K uniform samples, no Lloyd step) gives about
  // 1/(2 pi) = 0.159, the Poisson-Voronoi value (from memory: E d^2 to the nearest point of a
  // plane Poisson process of intensity lambda is 1/(pi lambda)), far outside the CVT range, so
  // the bounds above do separate a CVT from unrelaxed centroids.
  s.iterations = 0;
  const double random_g = second_moment(make_space(box(2, 0.0, 1.0), s), 400000, 17);
  INFO("random centroids G = " << random_g);
  CHECK(random_g == Approx(1.0 / (2.0 * std::numbers::pi)).epsilon(0.15));
  CHECK(random_g > 0.09);
}

TEST_CASE("3-D CVT of the unit cube stays above the body-centred cubic bound", "[cvt]") {
  // Best known 3-D lattice quantiser: body-centred cubic, G = 0.0785433 (Barnes & Sloane 1983);
  // the cube's edge cells keep a finite CVT a few percent above it. The ceiling 0.09 (versus about
  // 0.14 for random centroids, checked below) is our acceptance margin.
  CvtSettings s;
  s.cells = 400;
  s.seed = 9;
  const double g = second_moment(make_space(box(3, 0.0, 1.0), s), 400000, 23);
  INFO("G = " << g);
  CHECK(g > 0.0785433);
  CHECK(g < 0.09);
  s.iterations = 0;
  CHECK(second_moment(make_space(box(3, 0.0, 1.0), s), 200000, 23) > 0.11);
}

TEST_CASE("Lloyd iterations never increase the quantisation energy", "[cvt]") {
  // Each Lloyd step (nearest-centroid partition, then centroid = cell mean) cannot increase the
  // mean squared error on the points it clusters (Lloyd, IEEE Trans. IT 1982).
  CvtSettings s;
  s.cells = 150;
  s.samples = 30000;
  s.seed = 21;
  const Bounds b = box(3, 0.0, 1.0);
  const std::vector<double> samples = tessera::cvt_samples(b, s);
  double previous = std::numeric_limits<double>::infinity();
  for (int iterations : {0, 1, 2, 3, 5, 8, 13, 21, 34}) {
    const auto c = tessera::lloyd_centroids(samples, 3, s.cells, iterations);
    const double e = tessera::quantisation_energy(samples, c, 3);
    INFO("after " << iterations << " iterations: " << e);
    CHECK(e <= previous);
    previous = e;
  }
}

TEST_CASE("accelerated Lloyd equals textbook Lloyd bit for bit", "[cvt]") {
  // Textbook Lloyd (Lloyd, IEEE Trans. IT 1982): assign every point to its nearest centroid by a
  // full scan (lowest index on ties), then move each non-empty cell's centroid to the mean of its
  // points, summed in point order. The library skips work with distance bounds and neighbour
  // lists, but must reach exactly the same centroids.
  struct Case {
    std::size_t dims;
    std::int64_t cells;
  };
  for (const Case& c : {Case{2, 150}, Case{3, 40}, Case{5, 400}}) {
    const Bounds b = box(c.dims, 0.0, 1.0);
    CvtSettings s;
    s.cells = c.cells;
    s.samples = 8000;
    s.seed = 31;
    const std::vector<double> points = tessera::cvt_samples(b, s);
    const std::size_t n = points.size() / c.dims, k = static_cast<std::size_t>(c.cells);
    std::vector<double> centroids(points.begin(), points.begin() + static_cast<long>(k * c.dims));
    const int iterations = 12;
    for (int it = 0; it < iterations; ++it) {
      std::vector<double> sum(k * c.dims, 0.0);
      std::vector<std::size_t> count(k, 0);
      for (std::size_t i = 0; i < n; ++i) {
        const std::vector<double> x(points.begin() + static_cast<long>(i * c.dims),
                                    points.begin() + static_cast<long>((i + 1) * c.dims));
        const auto cell = static_cast<std::size_t>(brute_force_cell(b, centroids, x));
        ++count[cell];
        for (std::size_t d = 0; d < c.dims; ++d) sum[cell * c.dims + d] += x[d];
      }
      for (std::size_t j = 0; j < k; ++j)
        if (count[j] > 0)
          for (std::size_t d = 0; d < c.dims; ++d)
            centroids[j * c.dims + d] = sum[j * c.dims + d] / static_cast<double>(count[j]);
    }
    INFO("D = " << c.dims << ", K = " << c.cells);
    CHECK(tessera::lloyd_centroids(points, c.dims, c.cells, iterations) == centroids);
  }
}

TEST_CASE("CVT lookup equals brute-force nearest centroid, clamping outside points", "[cvt]") {
  // The k-d tree (many centroids) and the scan (few) must both give the exact nearest centroid
  // of the clamped descriptor; points up to half a box width outside exercise the clamping.
  struct Case {
    std::size_t dims;
    std::int64_t cells;
    int iterations;
  };
  // Tree: 2-D 500, 5-D 200, 1-D 64, 9-D 400 (no fixed-dimension tree); scan: 3-D 20, 9-D 100.
  for (const Case& c : {Case{2, 500, 10}, Case{5, 200, 5}, Case{3, 20, 5}, Case{1, 64, 5},
                        Case{9, 400, 0}, Case{9, 100, 0}}) {
    Bounds b = box(c.dims, -1.0, 3.0);
    b.upper[0] = 10.0;  // unequal widths
    CvtSettings s;
    s.cells = c.cells;
    s.samples = 20000;
    s.iterations = c.iterations;
    s.seed = 77;
    const CvtSpace space = make_space(b, s);
    std::mt19937_64 gen(101);
    std::size_t outside = 0, mismatches = 0, flag_errors = 0;
    std::vector<double> x(c.dims);
    for (int i = 0; i < 20000; ++i) {
      bool out = false;
      for (std::size_t d = 0; d < c.dims; ++d) {
        const double w = b.width(d);
        x[d] =
            std::uniform_real_distribution<double>(b.lower[d] - 0.5 * w, b.upper[d] + 0.5 * w)(gen);
        out = out || x[d] < b.lower[d] || x[d] > b.upper[d];
      }
      outside += out;
      const auto got = space.cell_of(x);
      mismatches += got.cell != brute_force_cell(b, space.centroids(), x);
      flag_errors += got.clamped != out;
    }
    INFO("D = " << c.dims << ", K = " << c.cells);
    CHECK(outside > 1000);
    CHECK(mismatches == 0);
    CHECK(flag_errors == 0);
  }
}

TEST_CASE("nearest-centroid tree and scan give the same answers", "[cvt]") {
  // Reference: the scan (every centroid, in index order). The tree, with or without a hint, and
  // the two- and k-nearest queries must agree with it exactly, and with a sort of all distances;
  // half the centroids and a third of the queries sit on a coarse grid, which makes many ties.
  using Method = tessera::NearestCentroid::Method;
  std::mt19937_64 gen(9);
  std::uniform_real_distribution<double> u(-0.2, 1.2);
  for (std::size_t dims : {1, 2, 3, 6, 11}) {
    std::vector<double> centroids;
    for (int i = 0; i < 300; ++i)
      for (std::size_t d = 0; d < dims; ++d)
        centroids.push_back(i % 2 ? u(gen) : static_cast<double>((i / 2 + d) % 5) * 0.25);
    const tessera::NearestCentroid tree(centroids, dims, Method::tree);
    const tessera::NearestCentroid scan(centroids, dims, Method::scan);
    REQUIRE(tree.uses_tree());
    REQUIRE_FALSE(scan.uses_tree());
    std::size_t wrong = 0;
    std::vector<std::uint32_t> idx(7);
    std::vector<double> sq(7);
    for (int q = 0; q < 2000; ++q) {
      std::vector<double> x(dims);
      for (auto& v : x) v = q % 3 ? u(gen) : static_cast<double>(gen() % 9) * 0.125;
      const auto hint = static_cast<std::uint32_t>(gen() % 300);
      const std::uint32_t expect = scan.nearest(x.data());
      const auto two_scan = scan.nearest_two(x.data(), 0);
      const auto two_tree = tree.nearest_two(x.data(), hint);
      wrong += tree.nearest(x.data()) != expect;
      wrong += tree.nearest(x.data(), hint) != expect;
      wrong += two_scan.index != expect || two_tree.index != expect;
      wrong += two_tree.first != two_scan.first || two_tree.second != two_scan.second;
      std::vector<double> all;
      for (std::uint32_t c = 0; c < 300; ++c) all.push_back(scan.squared_distance(x.data(), c));
      std::sort(all.begin(), all.end());
      wrong += two_scan.first != all[0] || two_scan.second != all[1];
      REQUIRE(tree.nearest_k(x.data(), 7, idx.data(), sq.data()) == 7);
      for (std::size_t j = 0; j < 7; ++j)
        wrong += sq[j] != all[j] || tree.squared_distance(x.data(), idx[j]) != sq[j];
    }
    INFO("D = " << dims);
    CHECK(wrong == 0);
  }
}

TEST_CASE("CVT lookup breaks ties towards the lowest index and keeps exact bounds inside",
          "[cvt]") {
  // 200 centroids (enough for the k-d tree path) where centroid j + 100 repeats centroid j:
  // every answer must be the lower copy, as a scan in index order gives.
  const Bounds b = box(2, 0.0, 1.0);
  std::mt19937_64 gen(5);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> centroids(200 * 2);
  for (std::size_t i = 0; i < 200; ++i) centroids[i] = u(gen);
  std::copy_n(centroids.begin(), 200, centroids.begin() + 200);
  REQUIRE(200 > tessera::NearestCentroid::scan_limit(2));
  const CvtSpace space(b, names(2), centroids);
  for (int i = 0; i < 5000; ++i) {
    const std::vector<double> x{u(gen), u(gen)};
    const auto got = space.cell_of(x);
    REQUIRE(got.cell < 100);
    REQUIRE(got.cell == brute_force_cell(b, centroids, x));
  }
  // Descriptors exactly on the bounds are inside: not clamped.
  CHECK_FALSE(space.cell_of(std::vector<double>{1.0, 0.0}).clamped);
  CHECK(space.cell_of(std::vector<double>{1.0 + 1e-12, 0.0}).clamped);
}

TEST_CASE("CVT centroids are bit-identical for any number of threads", "[cvt]") {
  struct Case {
    std::size_t dims;
    std::int64_t cells;
  };
  for (const Case& c : {Case{2, 400}, Case{4, 300}, Case{2, 30}}) {
    const Bounds b = box(c.dims, 0.0, 1.0);
    CvtSettings s;
    s.cells = c.cells;
    s.samples = 60000;
    s.iterations = 30;
    s.seed = 1234;
    std::map<int, std::vector<double>> by_threads;
    for (int threads : {1, 2, 3}) {
      tbb::global_control limit(tbb::global_control::max_allowed_parallelism, threads);
      by_threads[threads] = tessera::tessellate_descriptor_box(b, s);
    }
    INFO("D = " << c.dims << ", K = " << c.cells);
    CHECK(by_threads[1] == by_threads[2]);  // exact equality of every double
    CHECK(by_threads[1] == by_threads[3]);
    // ...while a different seed gives different centroids (the comparison can fail).
    s.seed = 1235;
    CHECK(tessera::tessellate_descriptor_box(b, s) != by_threads[1]);
  }
}

TEST_CASE("CVT settings and centroid arrays are validated", "[cvt]") {
  const Bounds b = box(2, 0.0, 1.0);
  CvtSettings s;
  s.cells = 0;
  CHECK_THROWS_AS(tessera::tessellate_descriptor_box(b, s), std::invalid_argument);
  s.cells = 100;
  s.samples = 99;
  CHECK_THROWS_AS(tessera::tessellate_descriptor_box(b, s), std::invalid_argument);
  s.samples = 1000;
  s.iterations = -1;
  CHECK_THROWS_AS(tessera::tessellate_descriptor_box(b, s), std::invalid_argument);
  s.iterations = 5;
  CHECK_THROWS_AS(tessera::tessellate_descriptor_box(Bounds{{0.0, 1.0}, {1.0, 1.0}}, s),
                  std::invalid_argument);
  CHECK(tessera::tessellate_descriptor_box(b, s).size() == 200);
  CHECK_THROWS_AS(CvtSpace(b, names(2), {0.1, 0.2, 0.3}), std::invalid_argument);
  CHECK_THROWS_AS(CvtSpace(b, names(2), {}), std::invalid_argument);
  CHECK_THROWS_AS(CvtSpace(b, names(2), {0.1, std::nan("")}), std::invalid_argument);
  // Default sample count: 100 per cell, at least 100000.
  s.samples = 0;
  s.cells = 50;
  CHECK(s.effective_samples() == 100000);
  s.cells = 5000;
  CHECK(s.effective_samples() == 500000);
}

TEST_CASE("CVT energy matches scikit-learn KMeans on the same samples", "[cvt][reference]") {
  // tests/reference/cvt_energy.py clusters the same samples with sklearn.cluster.KMeans
  // (k-means++, 3 restarts) and recomputes our energy and lookup with scipy's cKDTree. Lloyd from
  // a random start should land within a few percent of that energy.
  struct Case {
    std::size_t dims;
    std::int64_t cells;
    std::int64_t samples;
  };
  for (const Case& c : {Case{2, 64, 20000}, Case{3, 100, 30000}}) {
    const Bounds b = box(c.dims, 0.0, 1.0);
    CvtSettings s;
    s.cells = c.cells;
    s.samples = c.samples;
    s.iterations = 100;
    s.seed = 8;
    const std::vector<double> samples = tessera::cvt_samples(b, s);
    const std::vector<double> centroids =
        tessera::lloyd_centroids(samples, c.dims, c.cells, s.iterations);
    const double ours = tessera::quantisation_energy(samples, centroids, c.dims);
    const CvtSpace space(b, names(c.dims), centroids);
    std::vector<std::int64_t> cells(static_cast<std::size_t>(c.samples));
    for (std::size_t i = 0; i < cells.size(); ++i)
      cells[i] = space.cell_of({samples.data() + i * c.dims, c.dims}).cell;

    TempDir dir;
    write_raw(dir.path / "samples.f64", samples);
    write_raw(dir.path / "centroids.f64", centroids);
    write_raw(dir.path / "cells.i64", cells);
    const std::string command = "/usr/bin/python3 " TESSERA_SOURCE_DIR
                                "/tests/reference/cvt_energy.py " +
                                dir.path.string() + " " + std::to_string(c.samples) + " " +
                                std::to_string(c.dims) + " " + std::to_string(c.cells) + " 2>&1";
    FILE* pipe = ::popen(command.c_str(), "r");
    REQUIRE(pipe != nullptr);
    std::string output;
    char buffer[256];
    while (std::fgets(buffer, sizeof buffer, pipe) != nullptr) output += buffer;
    const int status = ::pclose(pipe);
    INFO(output);
    REQUIRE(status == 0);
    std::map<std::string, double> figures;
    std::istringstream lines(output);
    std::string key;
    double value = 0.0;
    while (lines >> key >> value) figures[key] = value;
    REQUIRE(figures.count("sklearn_energy") == 1);
    REQUIRE(figures.count("scipy_energy") == 1);
    REQUIRE(figures.count("cell_mismatches") == 1);

    INFO("D = " << c.dims << " K = " << c.cells << ": ours " << ours << ", sklearn "
                << figures["sklearn_energy"]);
    CHECK(figures["cell_mismatches"] == 0);
    CHECK(ours == Approx(figures["scipy_energy"]).epsilon(1e-9));
    CHECK(ours == Approx(figures["sklearn_energy"]).epsilon(0.03));
  }
}
