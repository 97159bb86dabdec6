#pragma once
// Deterministic randomness. Every stream is derived from (scenario seed, subject index, purpose,
// repeat) alone, and every distribution is sampled by frugal's own code, so numbers do not depend
// on thread count, generation order or the standard library's implementation-defined
// distributions.

#include <cmath>
#include <cstdint>

namespace frugal {

// What a stream is used for; keeping purposes apart means that, for example, a rescan draws new
// noise while anatomy and lesions stay identical.
enum class StreamPurpose : std::uint64_t {
  anatomy = 1,
  lesions = 2,
  distractors = 3,
  noise = 4,
  pose = 5,
  confounder = 6,
  pattern = 7,
  rater = 8,  // reserved for corruptors
};

// SplitMix64 finaliser (Steele, Lea & Flood 2014): a bijective 64-bit mixer.
constexpr std::uint64_t mix64(std::uint64_t value) {
  value += 0x9E3779B97F4A7C15ULL;
  value = (value ^ (value >> 30U)) * 0xBF58476D1CE4E5B9ULL;
  value = (value ^ (value >> 27U)) * 0x94D049BB133111EBULL;
  return value ^ (value >> 31U);
}

// xoshiro256** (Blackman & Vigna 2018), seeded through SplitMix64 from a key tuple.
class RandomStream {
 public:
  RandomStream(std::uint64_t seed, std::uint64_t subject, StreamPurpose purpose, std::uint64_t repeat = 0);
  explicit RandomStream(std::uint64_t key);

  std::uint64_t next_u64() {
    const std::uint64_t result = rotl(state_[1] * 5U, 7) * 9U;
    const std::uint64_t t = state_[1] << 17U;
    state_[2] ^= state_[0];
    state_[3] ^= state_[1];
    state_[1] ^= state_[2];
    state_[0] ^= state_[3];
    state_[2] ^= t;
    state_[3] = rotl(state_[3], 45);
    return result;
  }
  // Uniform on [0, 1) with 53 random bits.
  double uniform() { return static_cast<double>(next_u64() >> 11U) * 0x1.0p-53; }
  // Uniform on (0, 1], safe for log().
  double uniform_open0() { return (static_cast<double>(next_u64() >> 11U) + 1.0) * 0x1.0p-53; }
  double uniform(double low, double high) { return low + (high - low) * uniform(); }
  // Integer uniform on [low, high] (inclusive).
  std::int64_t uniform_int(std::int64_t low, std::int64_t high);

  double normal();
  double normal(double mean, double sd) { return mean + sd * normal(); }
  // Standard normals in float for bulk noise, by the ziggurat method (Marsaglia & Tsang 2000):
  // about four times faster than Box–Muller and exact up to float rounding.
  float normal_float();
  void normal_pair(float& first, float& second) {
    first = normal_float();
    second = normal_float();
  }

  double gamma(double shape);  // scale 1
  std::int64_t poisson(double mean);
  // Mean mu, variance mu + mu^2 / dispersion (gamma–Poisson mixture).
  std::int64_t negative_binomial(double mean, double dispersion);
  double lognormal(double median, double sigma) { return median * std::exp(sigma * normal()); }

 private:
  static std::uint64_t rotl(std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
  std::uint64_t state_[4]{};
  double spare_normal_ = 0.0;
  bool has_spare_normal_ = false;
};

}  // namespace frugal
