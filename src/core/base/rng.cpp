#include "core/base/rng.hpp"

#include <array>
#include <cmath>
#include <stdexcept>
#include <string>

namespace tessera {
namespace {

std::uint64_t splitmix64(std::uint64_t& x) {
  std::uint64_t z = (x += 0x9E3779B97F4A7C15ull);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

// The 256-layer ziggurat of the unnormalised density f(x) = exp(-x^2 / 2) (Marsaglia & Tsang,
// J. Statistical Software 5(8), 2000): every layer has area kArea; layer 0 is the base strip
// [0, r] plus the tail beyond r, drawn as a rectangle of width kArea / f(r).
constexpr double kTailStart = 3.6541528853610088;  // r for 256 layers (Marsaglia & Tsang 2000)
constexpr double kArea = 4.92867323399e-3;         // v for 256 layers (same source)

double density(double x) {
  return std::exp(-0.5 * x * x);
}

struct ZigguratTable {
  std::array<double, 257> x{};  // layer i spans [0, x[i]]; x[i + 1] is its inner edge
  std::array<double, 257> f{};  // density(x[i]), the same values the wedge test would compute
  ZigguratTable() {
    x[0] = kArea / density(kTailStart);
    x[1] = kTailStart;
    for (std::size_t i = 1; i < 255; ++i)
      x[i + 1] = std::sqrt(-2.0 * std::log(kArea / x[i] + density(x[i])));
    x[256] = 0.0;
    for (std::size_t i = 0; i < 257; ++i) f[i] = density(x[i]);
  }
};

const ZigguratTable& ziggurat_table() {
  static const ZigguratTable table;
  return table;
}

}  // namespace

StreamVersion stream_version(std::int64_t number) {
  if (number > kLatestStreamVersionNumber)
    throw std::invalid_argument(
        "its random streams are version " + std::to_string(number) +
        ", newer than this tessera draws (versions " + std::to_string(kOldestStreamVersionNumber) +
        " to " + std::to_string(kLatestStreamVersionNumber) +
        "), so the run would not continue identically; use a newer tessera");
  if (number < kOldestStreamVersionNumber)
    throw std::invalid_argument("its random stream version " + std::to_string(number) +
                                " is unknown (versions start at 1)");
  return static_cast<StreamVersion>(number);
}

// Each key word is mixed through splitmix64 in turn so nearby keys give unrelated streams.
RngKeyPrefix Rng::prefix(std::uint64_t seed, std::uint64_t key_a) {
  std::uint64_t x = seed;
  std::uint64_t h = splitmix64(x);
  x = h ^ key_a;
  return {splitmix64(x)};
}

Rng::Rng(std::uint64_t seed, std::uint64_t key_a, std::uint64_t key_b, std::uint64_t key_c,
         StreamVersion version)
    : Rng(prefix(seed, key_a), key_b, key_c, version) {}

Rng::Rng(RngKeyPrefix prefix, std::uint64_t key_b, std::uint64_t key_c, StreamVersion version)
    : zig_x_(ziggurat_table().x.data()), version_(version) {
  std::uint64_t x = prefix.mixed ^ key_b;
  const std::uint64_t h = splitmix64(x);
  x = h ^ key_c;
  for (auto& word : s_) word = splitmix64(x);
}

double Rng::polar() {
  // Marsaglia's polar method (Marsaglia & Bray 1964): two independent deviates per accepted
  // pair of uniforms, with no trigonometric calls; the second is kept for the next call.
  if (has_spare_) {
    has_spare_ = false;
    return spare_;
  }
  double u, v, s;
  do {
    u = 2.0 * uniform() - 1.0;
    v = 2.0 * uniform() - 1.0;
    s = u * u + v * v;
  } while (s >= 1.0 || s == 0.0);
  const double factor = std::sqrt(-2.0 * std::log(s) / s);
  spare_ = v * factor;
  has_spare_ = true;
  return u * factor;
}

double Rng::ziggurat_edge(unsigned layer, double z, bool negative) {
  // Rare paths (about 1% of draws): the tail beyond r, or the wedge of a layer outside its
  // inner rectangle; a rejected wedge point starts a fresh draw.
  for (;;) {
    if (layer == 0) {
      // Marsaglia's tail method (Marsaglia 1964): exponential proposals beyond r. 1 - uniform()
      // lies in (0, 1], keeping the logarithms finite.
      double a, b;
      do {
        a = -std::log(1.0 - uniform()) / kTailStart;
        b = -std::log(1.0 - uniform());
      } while (b + b < a * a);
      return negative ? -(kTailStart + a) : kTailStart + a;
    }
    const double outer = ziggurat_table().f[layer];
    const double inner = ziggurat_table().f[layer + 1];
    if (outer + uniform() * (inner - outer) < density(z)) return negative ? -z : z;
    const std::uint64_t bits = next();
    layer = static_cast<unsigned>(bits & 0xFF);
    negative = (bits & 0x100) != 0;
    z = static_cast<double>(bits >> 11) * 0x1.0p-53 * zig_x_[layer];
    if (z < zig_x_[layer + 1]) return negative ? -z : z;
  }
}

std::uint64_t Rng::below(std::uint64_t n) {
  // Lemire's multiply-shift with rejection (Lemire, ACM TOMACS 2019).
  __uint128_t m = static_cast<__uint128_t>(next()) * n;
  auto low = static_cast<std::uint64_t>(m);
  if (low < n) {
    const std::uint64_t threshold = (0 - n) % n;
    while (low < threshold) {
      m = static_cast<__uint128_t>(next()) * n;
      low = static_cast<std::uint64_t>(m);
    }
  }
  return static_cast<std::uint64_t>(m >> 64);
}

}  // namespace tessera
