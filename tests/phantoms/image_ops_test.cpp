#include "phantoms/image_ops.h"

#include <gtest/gtest.h>

#include <cmath>
#include <numeric>

namespace frugal {
namespace {

// Linear interpolation reproduces any trilinear function exactly (a property of the method).
TEST(Upsample, ReproducesLinearFieldsExactly) {
  const Geometry fine = centred_geometry({37, 21, 9}, {1.0, 1.0, 1.0});
  CoarseGrid grid;
  grid.step = 4;
  grid.shape = coarse_extent(fine.shape, grid.step);
  const auto linear = [](double x, double y, double z) { return 0.5 + 0.01 * x - 0.02 * y + 0.03 * z; };
  for (int k = 0; k < grid.shape.z; ++k)
    for (int j = 0; j < grid.shape.y; ++j)
      for (int i = 0; i < grid.shape.x; ++i)
        grid.values.push_back(static_cast<float>(linear(i * 4, j * 4, k * 4)));
  const FloatImage image = upsample(grid, fine);
  for (int k = 0; k < 9; ++k)
    for (int j = 0; j < 21; ++j)
      for (int i = 0; i < 37; ++i) ASSERT_NEAR(image.at(i, j, k), linear(i, j, k), 1e-5) << i << "," << j << "," << k;
}

// A normalised Gaussian kernel with reflecting borders keeps a constant and spreads an impulse
// into weights that sum to one (common practice, no source).
TEST(GaussianFilter, KeepsConstantsAndMassInThreeDimensions) {
  FloatImage constant(centred_geometry({16, 16, 16}, {1.0, 1.0, 2.0}), 3.0F);
  gaussian_filter(constant, {1.0, 1.0, 1.0});
  for (float v : constant.voxels()) ASSERT_NEAR(v, 3.0F, 1e-5);
  FloatImage impulse(centred_geometry({21, 21, 21}, {1.0, 1.0, 1.0}), 0.0F);
  impulse.at(10, 10, 10) = 1.0F;
  gaussian_filter(impulse, {1.2, 1.2, 1.2});
  const double total = std::accumulate(impulse.voxels().begin(), impulse.voxels().end(), 0.0);
  EXPECT_NEAR(total, 1.0, 1e-5);
  // Sum of squared kernel weights equals the variance gain reported for white noise.
  double squares = 0.0;
  for (float v : impulse.voxels()) squares += static_cast<double>(v) * v;
  EXPECT_NEAR(squares, gaussian_filter_noise_gain(impulse, {1.2, 1.2, 1.2}), 1e-6);
}

TEST(ResampleNearest, IdentityPoseKeepsLabels) {
  Image<std::uint8_t> labels(centred_geometry({9, 7, 5}, {1.0, 1.0, 1.0}), 0);
  labels.at(3, 2, 1) = 5;
  RigidPose pose;
  pose.shift_mm = {1.0, 0.0, 0.0};
  const auto shifted = resample_nearest(labels, pose);
  EXPECT_EQ(shifted.at(4, 2, 1), 5);  // a +1 mm shift moves the label one voxel along x
  EXPECT_EQ(shifted.at(3, 2, 1), 0);
}

}  // namespace
}  // namespace frugal
