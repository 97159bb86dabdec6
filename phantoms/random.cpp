#include "phantoms/random.h"

#include <algorithm>
#include <limits>

#include "phantoms/image.h"

namespace frugal {

RandomStream::RandomStream(std::uint64_t key) {
  std::uint64_t x = key;
  for (auto& word : state_) {
    x = mix64(x);
    word = x;
  }
}

RandomStream::RandomStream(std::uint64_t seed, std::uint64_t subject, StreamPurpose purpose,
                           std::uint64_t repeat)
    : RandomStream(mix64(mix64(mix64(seed) ^ subject) ^ static_cast<std::uint64_t>(purpose)) ^
                   mix64(repeat + 0x51ED27ULL)) {}

std::int64_t RandomStream::uniform_int(std::int64_t low, std::int64_t high) {
  FRUGAL_CHECK(high >= low);
  FRUGAL_CHECK(high - low < (std::int64_t{1} << 52));
  // 53 random bits scaled to the range: the bias is below 2^-52 * range, far under any test.
  const double range = static_cast<double>(high - low) + 1.0;
  return low + static_cast<std::int64_t>(uniform() * range);
}

double RandomStream::normal() {
  if (has_spare_normal_) {
    has_spare_normal_ = false;
    return spare_normal_;
  }
  // Box–Muller (1958): exact, and needs no rejection loop, so the draw count is fixed.
  const double radius = std::sqrt(-2.0 * std::log(uniform_open0()));
  const double angle = 2.0 * M_PI * uniform();
  spare_normal_ = radius * std::sin(angle);
  has_spare_normal_ = true;
  return radius * std::cos(angle);
}

void RandomStream::normal_pair(float& first, float& second) {
  const std::uint64_t bits = next_u64();
  // Two 32-bit uniforms from one draw; (0, 1] for the logarithm.
  const float u1 = (static_cast<float>(bits >> 40U) + 1.0F) * 0x1.0p-24F;
  const float u2 = static_cast<float>((bits >> 8U) & 0xFFFFFFU) * 0x1.0p-24F;
  const float radius = std::sqrt(-2.0F * std::log(u1));
  const float angle = 6.28318530717958647692F * u2;
  first = radius * std::cos(angle);
  second = radius * std::sin(angle);
}

double RandomStream::gamma(double shape) {
  FRUGAL_CHECK(shape > 0.0);
  // Marsaglia & Tsang (2000); shapes below one use the u^(1/shape) boost.
  if (shape < 1.0) {
    const double boost = std::pow(uniform_open0(), 1.0 / shape);
    return gamma(shape + 1.0) * boost;
  }
  const double d = shape - 1.0 / 3.0;
  const double c = 1.0 / std::sqrt(9.0 * d);
  while (true) {
    double x = 0.0;
    double v = 0.0;
    do {
      x = normal();
      v = 1.0 + c * x;
    } while (v <= 0.0);
    v = v * v * v;
    const double u = uniform_open0();
    if (u < 1.0 - 0.0331 * x * x * x * x) return d * v;
    if (std::log(u) < 0.5 * x * x + d * (1.0 - v + std::log(v))) return d * v;
  }
}

std::int64_t RandomStream::poisson(double mean) {
  FRUGAL_CHECK(mean >= 0.0 && mean <= 700.0);  // exp(-mean) must stay a normal double
  // Inversion by sequential search: exact, one uniform per draw.
  double u = uniform();
  double probability = std::exp(-mean);
  double cumulative = probability;
  std::int64_t k = 0;
  while (u >= cumulative && probability > 0.0) {
    ++k;
    probability *= mean / static_cast<double>(k);
    cumulative += probability;
  }
  return k;
}

std::int64_t RandomStream::negative_binomial(double mean, double dispersion) {
  FRUGAL_CHECK(mean >= 0.0 && dispersion > 0.0);
  if (mean == 0.0) return 0;
  const double rate = gamma(dispersion) * mean / dispersion;
  return poisson(std::min(rate, 700.0));
}

}  // namespace frugal
