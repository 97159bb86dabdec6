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

namespace {

// Ziggurat tables for 128 layers of the standard normal density (Marsaglia & Tsang 2000).
struct ZigguratTables {
  static constexpr int kLayers = 128;
  static constexpr double kTail = 3.442619855899;      // x of the base layer's right edge
  static constexpr double kLayerArea = 9.91256303526217e-3;
  double x[kLayers + 1];  // layer edges, x[0] = base width (area / f(kTail))
  double f[kLayers + 1];  // density exp(-x^2/2) at each edge

  ZigguratTables() {
    x[0] = kLayerArea / std::exp(-0.5 * kTail * kTail);
    x[1] = kTail;
    f[0] = 0.0;  // unused
    f[1] = std::exp(-0.5 * kTail * kTail);
    for (int i = 2; i < kLayers; ++i) {
      x[i] = std::sqrt(-2.0 * std::log(kLayerArea / x[i - 1] + f[i - 1]));
      f[i] = std::exp(-0.5 * x[i] * x[i]);
    }
    x[kLayers] = 0.0;
    f[kLayers] = 1.0;
  }
};

const ZigguratTables& ziggurat() {
  static const ZigguratTables tables;
  return tables;
}

}  // namespace

float RandomStream::normal_float() {
  const ZigguratTables& z = ziggurat();
  while (true) {
    const std::uint64_t bits = next_u64();
    const int layer = static_cast<int>(bits & 127U);
    // A signed uniform on (-1, 1) from the top 53 bits, independent of the layer bits.
    const double u = 2.0 * (static_cast<double>(bits >> 11U) * 0x1.0p-53) - 1.0;
    const double x = u * z.x[layer];
    if (std::abs(x) < z.x[layer + 1]) return static_cast<float>(x);  // inside the layer's core
    if (layer == 0) {
      // The base layer outside its core: a draw from the tail beyond kTail (Marsaglia 1964).
      double tail = 0.0, y = 0.0;
      do {
        tail = -std::log(uniform_open0()) / ZigguratTables::kTail;
        y = -std::log(uniform_open0());
      } while (y + y < tail * tail);
      return static_cast<float>(u > 0.0 ? ZigguratTables::kTail + tail : -ZigguratTables::kTail - tail);
    }
    // The wedge between the layer's core and its edge: accept under the density.
    const double density_low = z.f[layer], density_high = z.f[layer + 1];
    if (density_low + uniform() * (density_high - density_low) < std::exp(-0.5 * x * x)) return static_cast<float>(x);
  }
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
