// Counter-keyed random streams. Every draw of a run comes from a stream keyed by
// (seed, batch, candidate[, purpose]), so results never depend on thread count or on where a run
// was interrupted. Generator: xoshiro256** seeded through splitmix64 (Blackman & Vigna 2018).
// Normal deviates use Marsaglia's polar method written here, because std::normal_distribution is
// implementation-defined and would break bit-identical archives across standard libraries.
#pragma once

#include <cstdint>

namespace tessera {

class Rng {
 public:
  Rng(std::uint64_t seed, std::uint64_t key_a, std::uint64_t key_b = 0, std::uint64_t key_c = 0);

  std::uint64_t next();
  double uniform();                        // [0, 1)
  double uniform(double lo, double hi);    // [lo, hi)
  double normal();                         // standard normal (polar method, pairs)
  std::uint64_t below(std::uint64_t n);    // uniform in [0, n), unbiased; n > 0

 private:
  std::uint64_t s_[4];
  double spare_ = 0.0;     // second value of the last polar-method pair
  bool has_spare_ = false;
};

// Distinct purposes drawing from the same (seed, batch, candidate) key.
enum class StreamPurpose : std::uint64_t { variation = 1, selection = 2, initial = 3, cvt = 4,
                                           novelty = 5, adapt = 6 };

}  // namespace tessera
