#include "phantoms/noise.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/image_ops.h"

namespace frugal {
namespace {

struct RicianCase {
  double amplitude, sigma, mean, variance;
};

// Rice moments from scipy.stats.rice(b=A/sigma, scale=sigma).mean() and .var() (scipy; the closed
// forms of Gudbjartsson & Patz 1995, Magn Reson Med 34:910-914).
class RicianMoments : public ::testing::TestWithParam<RicianCase> {};

TEST_P(RicianMoments, MatchAnalyticMeanAndVariance) {
  const RicianCase c = GetParam();
  FloatImage image(centred_geometry({512, 512, 1}, {1, 1, 1}), static_cast<float>(c.amplitude));
  RandomStream random(21, 0, StreamPurpose::noise);
  add_rician_noise(image, c.sigma, random);
  double sum = 0.0, sum2 = 0.0;
  for (float v : image.voxels()) {
    sum += v;
    sum2 += static_cast<double>(v) * v;
  }
  const auto n = static_cast<double>(image.size());
  const double mean = sum / n, variance = sum2 / n - mean * mean;
  // Tolerances: 5 standard errors of the mean (sqrt(var/n)) and of the variance (~var*sqrt(2/n)).
  EXPECT_NEAR(mean, c.mean, 5.0 * std::sqrt(c.variance / n)) << "seed 21";
  EXPECT_NEAR(variance, c.variance, 5.0 * c.variance * std::sqrt(2.0 / n)) << "seed 21";
  // Exact second moment E[M^2] = A^2 + 2 sigma^2 (Gudbjartsson & Patz 1995, Magn Reson Med 34:910).
  EXPECT_NEAR(sum2 / n, c.amplitude * c.amplitude + 2.0 * c.sigma * c.sigma,
              0.01 * (c.amplitude * c.amplitude + 2.0 * c.sigma * c.sigma));
}

INSTANTIATE_TEST_SUITE_P(ScipyRice, RicianMoments,
                         ::testing::Values(RicianCase{0, 1, 1.2533141373, 0.4292036732},
                                           RicianCase{1, 1, 1.5485724606, 0.6019233344},
                                           RicianCase{2, 1, 2.2723834281, 0.8362735558},
                                           RicianCase{3, 1, 3.1725772879, 0.9347533523},
                                           RicianCase{10, 2, 10.2021392790, 3.9163541322}));

TEST(GaussianNoise, CorrelatedNoiseKeepsItsStandardDeviation) {
  for (const double correlation : {0.0, 0.8, 2.0}) {
    FloatImage image(centred_geometry({256, 256, 1}, {1, 1, 1}), 0.0F);
    RandomStream random(22, 0, StreamPurpose::noise);
    add_gaussian_noise(image, 15.0, correlation, random);
    double sum2 = 0.0;
    for (float v : image.voxels()) sum2 += static_cast<double>(v) * v;
    // Common practice, no source: rescaling by the kernel's noise gain keeps the voxel SD; the
    // tolerance allows for the fewer independent samples of correlated noise.
    EXPECT_NEAR(std::sqrt(sum2 / static_cast<double>(image.size())), 15.0, 0.5) << "correlation " << correlation;
  }
}

}  // namespace
}  // namespace frugal
