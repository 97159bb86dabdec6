#include "phantoms/distribution.h"

#include <gtest/gtest.h>

#include <cmath>

namespace frugal {
namespace {

TEST(Distribution, TruncatedNormalStaysInBoundsWithTheRightMean) {
  Distribution d;
  d.kind = Distribution::Kind::normal;
  d.mean = 5.0;
  d.sd = 2.0;
  d.min = 5.0;
  d.max = 100.0;
  ASSERT_EQ(d.validate("x", 0.0, 200.0), "");
  RandomStream random(1, 0, StreamPurpose::lesions);
  double sum = 0.0;
  const int n = 100000;
  for (int i = 0; i < n; ++i) {
    const double x = d.sample(random);
    ASSERT_GE(x, 5.0);
    ASSERT_LE(x, 100.0);
    sum += x;
  }
  // Half-normal mean = mu + sd * sqrt(2/pi) (handbook fact).
  EXPECT_NEAR(sum / n, 5.0 + 2.0 * std::sqrt(2.0 / M_PI), 0.02);
}

TEST(Distribution, ValidationNamesThePlaceAndTheAllowedRange) {
  Distribution d = Distribution::uniform_between(3.0, 1.0);
  EXPECT_NE(d.validate("streaks.length_mm", 0.5, 200.0).find("streaks.length_mm"), std::string::npos);
  Distribution narrow;
  narrow.kind = Distribution::Kind::normal;
  narrow.mean = 0.0;
  narrow.sd = 1.0;
  narrow.min = 10.0;
  narrow.max = 11.0;
  EXPECT_NE(narrow.validate("x", 0.0, 20.0).find("less than 1%"), std::string::npos);
  CountDistribution count{CountDistribution::Kind::negative_binomial, 5.0, -1.0};
  EXPECT_NE(count.validate("streaks.count", 100).find("dispersion"), std::string::npos);
}

// Uniform integers on [a, b]: SD = sqrt(((b-a+1)^2 - 1)/12) (handbook fact).
TEST(CountDistribution, SpreadMatchesTheory) {
  CountDistribution uniform{CountDistribution::Kind::uniform, 0.0, 0.0, 0, 2, 8};
  EXPECT_DOUBLE_EQ(uniform.expected(), 5.0);
  EXPECT_DOUBLE_EQ(uniform.spread(), std::sqrt((49.0 - 1.0) / 12.0));
  CountDistribution nb{CountDistribution::Kind::negative_binomial, 6.0, 3.0};
  EXPECT_DOUBLE_EQ(nb.spread(), std::sqrt(6.0 + 36.0 / 3.0));
}

}  // namespace
}  // namespace frugal
