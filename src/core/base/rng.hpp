// Counter-keyed random streams. Every draw of a run comes from a stream keyed by
// (seed, batch, candidate[, purpose]), so results never depend on thread count or on where a run
// was interrupted. Generator: xoshiro256** seeded through splitmix64 (Blackman & Vigna 2018).
// Normal deviates are written here, because std::normal_distribution is implementation-defined
// and would break bit-identical archives across standard libraries. Two stream versions exist;
// they share every uniform draw and differ only in how normal deviates are made:
//   1: Marsaglia's polar method (pairs, one logarithm per pair);
//   2: a 256-layer ziggurat (Marsaglia & Tsang 2000), one 64-bit draw per deviate almost always.
// An archive records the version its run used, so that it resumes with its own generator.
// The hot paths (next, uniform) are defined in this header so that callers inline them.
#pragma once

#include <bit>
#include <cstdint>
#include <span>

namespace tessera {

enum class StreamVersion : std::uint32_t { polar = 1, ziggurat = 2 };
inline constexpr StreamVersion kLatestStreamVersion = StreamVersion::ziggurat;
inline constexpr std::int64_t kOldestStreamVersionNumber = 1;
inline constexpr std::int64_t kLatestStreamVersionNumber = 2;

// The version numbered `number` (as an archive records it); throws std::invalid_argument, saying
// why, for a number this build does not draw.
StreamVersion stream_version(std::int64_t number);

// The part of a stream's seeding that depends on the seed and the first key only: the streams of
// one batch's candidates share it (they differ in key_b), so it is mixed once per batch.
struct RngKeyPrefix {
  std::uint64_t mixed;
};

class Rng {
 public:
  Rng(std::uint64_t seed, std::uint64_t key_a, std::uint64_t key_b = 0, std::uint64_t key_c = 0,
      StreamVersion version = kLatestStreamVersion);
  // The same stream as Rng(seed, key_a, key_b, key_c, version) for prefix(seed, key_a).
  Rng(RngKeyPrefix prefix, std::uint64_t key_b, std::uint64_t key_c, StreamVersion version);
  static RngKeyPrefix prefix(std::uint64_t seed, std::uint64_t key_a);

  std::uint64_t next() { return advance(s_[0], s_[1], s_[2], s_[3]); }
  double uniform() { return static_cast<double>(next() >> 11) * 0x1.0p-53; }   // [0, 1)
  double uniform(double lo, double hi) { return lo + (hi - lo) * uniform(); }  // [lo, hi)
  // A standard normal deviate by this stream's version.
  double normal() { return version_ == StreamVersion::ziggurat ? ziggurat() : polar(); }
  // out.size() deviates, exactly as many normal() calls would give, in order.
  void normals(std::span<double> out) {
    for_each_normal(out.size(), [&](std::size_t i, double z) { out[i] = z; });
  }
  // The same `count` deviates handed to use(i, z) one at a time, so that a caller consumes each
  // while it is in a register (a deviate stored and read back as half of a vector load waits
  // for the store to complete). The stream's state stays in locals through the common case and
  // goes back to the members only around the rare edge path, which draws from them.
  template <class Use>
  void for_each_normal(std::size_t count, Use&& use) {
    if (version_ != StreamVersion::ziggurat) {
      for (std::size_t i = 0; i < count; ++i) use(i, polar());
      return;
    }
    std::uint64_t s0 = s_[0], s1 = s_[1], s2 = s_[2], s3 = s_[3];
    for (std::size_t i = 0; i < count; ++i) {
      const std::uint64_t bits = advance(s0, s1, s2, s3);
      const unsigned layer = static_cast<unsigned>(bits & 0xFF);
      const double z = static_cast<double>(bits >> 11) * 0x1.0p-53 * zig_x_[layer];
      if (z < zig_x_[layer + 1]) [[likely]] {
        use(i, with_sign(z, bits));
        continue;
      }
      s_[0] = s0, s_[1] = s1, s_[2] = s2, s_[3] = s3;
      use(i, ziggurat_edge(layer, z, (bits & 0x100) != 0));
      s0 = s_[0], s1 = s_[1], s2 = s_[2], s3 = s_[3];
    }
    s_[0] = s0, s_[1] = s1, s_[2] = s2, s_[3] = s3;
  }
  std::uint64_t below(std::uint64_t n);  // uniform in [0, n), unbiased; n > 0
  StreamVersion version() const { return version_; }

 private:
  static std::uint64_t rotl(std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
  // One xoshiro256** step over a state held anywhere: the members, or locals that the compiler
  // keeps in registers through a loop (an array would stay in memory).
  static std::uint64_t advance(std::uint64_t& s0, std::uint64_t& s1, std::uint64_t& s2,
                               std::uint64_t& s3) {
    const std::uint64_t result = rotl(s1 * 5, 7) * 9;
    const std::uint64_t t = s1 << 17;
    s2 ^= s0;
    s3 ^= s1;
    s1 ^= s2;
    s0 ^= s3;
    s2 ^= t;
    s3 = rotl(s3, 45);
    return result;
  }
  double polar();
  double ziggurat() {
    // The common case inline: a point inside a layer's rectangle, under the curve.
    const std::uint64_t bits = next();
    const unsigned layer = static_cast<unsigned>(bits & 0xFF);
    const double z = static_cast<double>(bits >> 11) * 0x1.0p-53 * zig_x_[layer];
    if (z < zig_x_[layer + 1]) return with_sign(z, bits);
    return ziggurat_edge(layer, z, (bits & 0x100) != 0);
  }
  // z (>= 0) negated when bit 8 of `bits` is set, without a branch: the sign is a coin toss,
  // which a branch would mispredict half the time. Bit-identical to `negative ? -z : z`.
  static double with_sign(double z, std::uint64_t bits) {
    return std::bit_cast<double>(std::bit_cast<std::uint64_t>(z) | ((bits & 0x100) << 55));
  }
  double ziggurat_edge(unsigned layer, double z, bool negative);

  std::uint64_t s_[4];
  const double* zig_x_;  // the ziggurat's 257 layer edges (shared table)
  StreamVersion version_;
  double spare_ = 0.0;  // second value of the last polar-method pair
  bool has_spare_ = false;
};

// Distinct purposes drawing from the same (seed, batch, candidate) key.
enum class StreamPurpose : std::uint64_t {
  variation = 1,
  selection = 2,
  initial = 3,
  cvt = 4,
  novelty = 5,
  adapt = 6
};

}  // namespace tessera
