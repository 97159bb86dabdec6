#include "phantoms/random.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <vector>

namespace frugal {
namespace {

TEST(RandomStream, SameKeySameNumbersDifferentKeyDifferentNumbers) {
  RandomStream a(42, 7, StreamPurpose::noise, 0), b(42, 7, StreamPurpose::noise, 0);
  RandomStream c(42, 7, StreamPurpose::noise, 1), d(42, 8, StreamPurpose::noise, 0);
  for (int i = 0; i < 100; ++i) {
    const std::uint64_t x = a.next_u64();
    EXPECT_EQ(x, b.next_u64());
    EXPECT_NE(x, c.next_u64());
    EXPECT_NE(x, d.next_u64());
  }
}

// Kolmogorov–Smirnov distance of the ziggurat normals from the exact normal CDF; the 0.1%
// critical value is 1.95/sqrt(n) (Smirnov's asymptotic table, common practice).
TEST(RandomStream, ZigguratNormalMatchesTheNormalDistribution) {
  RandomStream random(3, 0, StreamPurpose::noise);
  const int n = 400000;
  std::vector<double> draws(n);
  double sum = 0.0, sum2 = 0.0, sum4 = 0.0;
  for (double& x : draws) {
    x = random.normal_float();
    sum += x;
    sum2 += x * x;
    sum4 += x * x * x * x;
  }
  std::sort(draws.begin(), draws.end());
  double distance = 0.0;
  for (int i = 0; i < n; ++i) {
    const double cdf = 0.5 * std::erfc(-draws[static_cast<std::size_t>(i)] / std::sqrt(2.0));
    distance = std::max({distance, std::abs(cdf - i / static_cast<double>(n)), std::abs(cdf - (i + 1) / static_cast<double>(n))});
  }
  EXPECT_LT(distance, 1.95 / std::sqrt(n)) << "seed 3";
  EXPECT_NEAR(sum / n, 0.0, 4.0 / std::sqrt(n));          // SE of the mean is 1/sqrt(n)
  EXPECT_NEAR(sum2 / n, 1.0, 4.0 * std::sqrt(2.0 / n));   // SE of the variance is sqrt(2/n)
  EXPECT_NEAR(sum4 / n, 3.0, 4.0 * std::sqrt(96.0 / n));  // normal kurtosis 3 (handbook fact); var(x^4) = 96
  // The tail beyond the base layer (|x| > 3.4426) has probability 5.76e-4 (from the normal CDF).
  const auto tail = std::count_if(draws.begin(), draws.end(), [](double x) { return std::abs(x) > 3.442619855899; });
  EXPECT_NEAR(static_cast<double>(tail) / n, 5.76e-4, 4.0 * std::sqrt(5.76e-4 / n));
}

// Poisson mean = variance = lambda; negative binomial variance = mu + mu^2/r (handbook facts).
TEST(RandomStream, PoissonAndNegativeBinomialMoments) {
  for (const double mean : {0.5, 6.0, 40.0}) {
    RandomStream random(11, 0, StreamPurpose::lesions);
    const int n = 200000;
    double sum = 0.0, sum2 = 0.0;
    for (int i = 0; i < n; ++i) {
      const auto k = static_cast<double>(random.poisson(mean));
      sum += k;
      sum2 += k * k;
    }
    const double m = sum / n, variance = sum2 / n - m * m;
    EXPECT_NEAR(m, mean, 5.0 * std::sqrt(mean / n)) << "poisson mean " << mean << " seed 11";
    // SE of a sample variance: sqrt((mu4 - sigma^4) / n); Poisson mu4 = lambda + 3 lambda^2.
    const double variance_se = std::sqrt((mean + 3.0 * mean * mean - mean * mean) / n);
    EXPECT_NEAR(variance, mean, 5.0 * variance_se) << "poisson mean " << mean;
  }
  RandomStream random(12, 0, StreamPurpose::lesions);
  const double mu = 6.0, dispersion = 2.0;
  const int n = 200000;
  double sum = 0.0, sum2 = 0.0;
  for (int i = 0; i < n; ++i) {
    const auto k = static_cast<double>(random.negative_binomial(mu, dispersion));
    sum += k;
    sum2 += k * k;
  }
  const double m = sum / n, variance = sum2 / n - m * m;
  EXPECT_NEAR(m, mu, 0.05) << "seed 12";
  // 4% is about 8 standard errors of the sample variance here (NB excess kurtosis is about 6/r:
  // SE ~ variance * sqrt((2 + 6 / r) / n)), so only a wrong variance formula fails.
  EXPECT_NEAR(variance, mu + mu * mu / dispersion, 0.04 * (mu + mu * mu / dispersion)) << "seed 12";
}

// Gamma(k) has mean k and variance k (handbook fact), including shapes below 1.
TEST(RandomStream, GammaMoments) {
  for (const double shape : {0.4, 2.0, 9.0}) {
    RandomStream random(13, 0, StreamPurpose::lesions);
    const int n = 200000;
    double sum = 0.0, sum2 = 0.0;
    for (int i = 0; i < n; ++i) {
      const double x = random.gamma(shape);
      sum += x;
      sum2 += x * x;
    }
    const double m = sum / n;
    EXPECT_NEAR(m, shape, 5.0 * std::sqrt(shape / n)) << "shape " << shape;
    // SE of a sample variance: sqrt((mu4 - sigma^4) / n); gamma(k) mu4 = 3k^2 + 6k (handbook fact).
    const double variance_se = std::sqrt((3.0 * shape * shape + 6.0 * shape - shape * shape) / n);
    EXPECT_NEAR(sum2 / n - m * m, shape, 5.0 * variance_se) << "shape " << shape;
  }
}

TEST(RandomStream, UniformIntCoversTheClosedRangeEvenly) {
  RandomStream random(5, 0, StreamPurpose::pattern);
  std::vector<int> counts(4, 0);
  for (int i = 0; i < 40000; ++i) ++counts[static_cast<std::size_t>(random.uniform_int(0, 3))];
  for (int c : counts) EXPECT_NEAR(c, 10000, 400);  // 4 SD of a binomial(40000, 1/4)
}

}  // namespace
}  // namespace frugal
