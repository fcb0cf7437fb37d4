// The counter-keyed random streams: distributions and independence of keys.
#include <catch2/catch.hpp>

#include <unistd.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "core/base/rng.hpp"

using namespace tessera;

namespace {

// One-sample Kolmogorov-Smirnov statistic of sorted samples against a CDF.
template <class Cdf>
double ks_statistic(std::vector<double> x, Cdf cdf) {
  std::sort(x.begin(), x.end());
  const double n = static_cast<double>(x.size());
  double d = 0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double f = cdf(x[i]);
    d = std::max({d, (static_cast<double>(i) + 1) / n - f, f - static_cast<double>(i) / n});
  }
  return d;
}

// Runs tests/reference/normal_sample_check.py (scipy) on `x`; returns its name -> value pairs.
std::map<std::string, double> scipy_check(const std::vector<double>& x) {
  namespace fs = std::filesystem;
  const fs::path file =
      fs::temp_directory_path() / ("tessera-normals-" + std::to_string(getpid()) + ".bin");
  {
    std::ofstream out(file, std::ios::binary);
    out.write(reinterpret_cast<const char*>(x.data()),
              static_cast<std::streamsize>(x.size() * sizeof(double)));
  }
  const std::string command = "/usr/bin/python3 " TESSERA_SOURCE_DIR
                              "/tests/reference/normal_sample_check.py " +
                              file.string();
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) throw std::runtime_error("cannot run python3");
  std::string text;
  char buffer[4096];
  while (std::fgets(buffer, sizeof buffer, pipe) != nullptr) text += buffer;
  const int status = pclose(pipe);
  fs::remove(file);
  if (status != 0) throw std::runtime_error("normal_sample_check.py failed");
  std::map<std::string, double> values;
  std::istringstream in(text);
  std::string name;
  double value = 0;
  while (in >> name >> value) values[name] = value;
  return values;
}

}  // namespace

TEST_CASE("normal deviates follow the standard normal distribution") {
  // Kolmogorov-Smirnov at the 1% level: critical value 1.628 / sqrt(n) for large n (Massey,
  // J. American Statistical Association 1951, table 1).
  std::vector<double> x;
  for (std::uint64_t key = 0; key < 2000; ++key) {
    Rng rng(42, key);
    for (int i = 0; i < 10; ++i) x.push_back(rng.normal());
  }
  const double n = static_cast<double>(x.size());
  const double d = ks_statistic(x, [](double v) { return 0.5 * std::erfc(-v / std::sqrt(2.0)); });
  CHECK(d < 1.628 / std::sqrt(n));
  double mean = 0, var = 0;
  for (double v : x) mean += v / n;
  for (double v : x) var += (v - mean) * (v - mean) / n;
  CHECK(std::fabs(mean) < 4.0 / std::sqrt(n));  // four standard errors
  CHECK(std::fabs(var - 1.0) < 4.0 * std::sqrt(2.0 / n));
  // And the test can fail: uniform deviates are far from normal.
  std::vector<double> u;
  Rng rng(1, 1);
  for (int i = 0; i < 20000; ++i) u.push_back(rng.uniform(-2, 2));
  CHECK(ks_statistic(u, [](double v) { return 0.5 * std::erfc(-v / std::sqrt(2.0)); }) >
        1.628 / std::sqrt(20000.0));
}

TEST_CASE("uniform deviates and below(n) are uniform") {
  // Chi-square with 9 degrees of freedom: 21.67 is the 1% critical value (standard tables,
  // e.g. Abramowitz & Stegun, table 26.8).
  std::vector<double> counts(10, 0.0);
  Rng rng(7, 3);
  const int n = 100000;
  for (int i = 0; i < n; ++i) counts[rng.below(10)] += 1;
  double chi2 = 0;
  for (double c : counts) chi2 += (c - n / 10.0) * (c - n / 10.0) / (n / 10.0);
  CHECK(chi2 < 21.67);
  std::vector<double> x;
  for (int i = 0; i < 20000; ++i) x.push_back(rng.uniform());
  CHECK(ks_statistic(x, [](double v) { return std::clamp(v, 0.0, 1.0); }) <
        1.628 / std::sqrt(20000.0));
}

TEST_CASE("streams are fixed by their keys and differ between keys") {
  Rng a(5, 1, 2, 3), b(5, 1, 2, 3), c(5, 1, 2, 4), d(6, 1, 2, 3);
  for (int i = 0; i < 100; ++i) {
    const auto va = a.next();
    CHECK(va == b.next());
    CHECK(va != c.next());
    CHECK(va != d.next());
  }
}

TEST_CASE("a stream seeded from a shared key prefix is the stream of all its keys") {
  // Candidates of one batch mix the seed and batch index once (Rng::prefix); their streams must
  // be those of the full constructor, whatever the keys (0, small, all bits set).
  const std::uint64_t keys[] = {0, 1, 2, 41, 0x8000000000000000ull, ~0ull};
  for (const StreamVersion version : {StreamVersion::polar, StreamVersion::ziggurat})
    for (const std::uint64_t seed : keys)
      for (const std::uint64_t a : keys) {
        const RngKeyPrefix prefix = Rng::prefix(seed, a);
        for (const std::uint64_t b : keys)
          for (const std::uint64_t c : {std::uint64_t{0}, std::uint64_t{3}}) {
            Rng whole(seed, a, b, c, version), shared(prefix, b, c, version);
            for (int i = 0; i < 4; ++i) REQUIRE(whole.next() == shared.next());
            REQUIRE(std::bit_cast<std::uint64_t>(whole.normal()) ==
                    std::bit_cast<std::uint64_t>(shared.normal()));
          }
      }
}

TEST_CASE("both stream versions give standard normal deviates by scipy's tests", "[scipy]") {
  // 10^6 draws from 1000 streams of 1000, as candidates draw them. scipy.stats.kstest against the
  // standard normal; moments within four standard errors; the ziggurat's tail (|x| > r) as often
  // as the normal law says, within four binomial standard deviations.
  for (const StreamVersion version : {StreamVersion::polar, StreamVersion::ziggurat}) {
    INFO("stream version " << static_cast<int>(version));
    std::vector<double> x;
    x.reserve(1000000);
    for (std::uint64_t key = 0; key < 1000; ++key) {
      Rng rng(2024, key, 0, 0, version);
      for (int i = 0; i < 1000; ++i) x.push_back(rng.normal());
    }
    const auto v = scipy_check(x);
    REQUIRE(v.at("n") == 1e6);
    CHECK(v.at("ks_p") > 0.001);
    CHECK(std::fabs(v.at("mean")) < 4 * v.at("mean_se"));
    CHECK(std::fabs(v.at("variance") - 1.0) < 4 * v.at("variance_se"));
    CHECK(std::fabs(v.at("skewness")) < 4 * v.at("skewness_se"));
    CHECK(std::fabs(v.at("kurtosis")) < 4 * v.at("kurtosis_se"));
    const double expected = v.at("tail_expected");
    CHECK(std::fabs(v.at("tail") - expected) < 4 * std::sqrt(expected));
  }
  // And the check can fail: a sample of variance 1.01 is told apart.
  std::vector<double> wide;
  Rng rng(5, 5);
  for (int i = 0; i < 1000000; ++i) wide.push_back(1.005 * rng.normal());
  const auto v = scipy_check(wide);
  CHECK(std::fabs(v.at("variance") - 1.0) > 4 * v.at("variance_se"));
}

TEST_CASE("stream version 1 is Marsaglia's polar method on the stream's uniforms", "[versions]") {
  // Marsaglia & Bray (SIAM Review 6, 1964): from uniforms u, v in (-1, 1) with s = u^2 + v^2 in
  // (0, 1), the pair u f, v f with f = sqrt(-2 ln s / s); written here again on a twin stream.
  Rng polar(9, 4, 2, 1, StreamVersion::polar);
  Rng twin(9, 4, 2, 1, StreamVersion::polar);
  for (int pair = 0; pair < 5000; ++pair) {
    double u, v, s;
    do {
      u = 2.0 * twin.uniform() - 1.0;
      v = 2.0 * twin.uniform() - 1.0;
      s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    const double f = std::sqrt(-2.0 * std::log(s) / s);
    const double want[2] = {u * f, v * f};
    const double got[2] = {polar.normal(), polar.normal()};
    REQUIRE(std::memcmp(got, want, sizeof got) == 0);
  }
}

TEST_CASE("bulk normals equal one-by-one draws for both versions", "[versions]") {
  for (const StreamVersion version : {StreamVersion::polar, StreamVersion::ziggurat}) {
    Rng one(3, 1, 4, 1, version), bulk(3, 1, 4, 1, version);
    std::vector<double> a(1001), b(1001);
    for (double& v : a) v = one.normal();
    bulk.normals({b.data(), 7});  // uneven pieces: the polar method's spare carries over
    bulk.normals({b.data() + 7, b.size() - 7});
    CHECK(std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
    CHECK(one.next() == bulk.next());
  }
}

TEST_CASE("the versions share their uniforms and differ in their normals", "[versions]") {
  Rng polar(1, 2, 3, 4, StreamVersion::polar), ziggurat(1, 2, 3, 4, StreamVersion::ziggurat);
  for (int i = 0; i < 100; ++i) CHECK(polar.uniform() == ziggurat.uniform());
  CHECK(polar.normal() != ziggurat.normal());
  CHECK(Rng(1, 2).version() == kLatestStreamVersion);
  CHECK(kLatestStreamVersion == StreamVersion::ziggurat);
}

TEST_CASE("stream version numbers outside those drawn are refused saying why", "[versions]") {
  CHECK(stream_version(1) == StreamVersion::polar);
  CHECK(stream_version(2) == StreamVersion::ziggurat);
  CHECK_THROWS_WITH(stream_version(3), Catch::Contains("version 3, newer than this tessera"));
  CHECK_THROWS_WITH(stream_version(0), Catch::Contains("unknown"));
}

TEST_CASE("both stream versions draw the deviates their first builds drew", "[versions]") {
  // An archive resumes with its own stream version, so a faster generator must not change one
  // bit. The digests were taken from the first builds of each version (FNV-1a, 64-bit, over the
  // deviates' bit patterns: 1,000,000 drawn in bulk, then 1,000 one by one).
  const std::pair<StreamVersion, std::uint64_t> pinned[] = {
      {StreamVersion::polar, 0xda9c11e3e57deb0eull},
      {StreamVersion::ziggurat, 0xe1b7be869073dfb9ull}};
  for (const auto& [version, digest] : pinned) {
    Rng rng(2024, 7, 3, 1, version);
    std::uint64_t h = 1469598103934665603ull;  // FNV-1a offset basis and prime (FNV spec)
    const auto mix = [&h](double d) {
      h ^= std::bit_cast<std::uint64_t>(d);
      h *= 1099511628211ull;
    };
    std::vector<double> out(1000);
    for (int k = 0; k < 1000; ++k) {
      rng.normals(out);
      for (const double d : out) mix(d);
    }
    for (int k = 0; k < 1000; ++k) mix(rng.normal());
    CHECK(h == digest);
  }
}
