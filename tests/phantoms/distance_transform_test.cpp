#include "phantoms/distance_transform.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <opencv2/imgproc.hpp>
#include <string>

#include "phantoms/image_ops.h"
#include "phantoms/image_views.h"
#include "phantoms/nifti_io.h"
#include "phantoms/random.h"

namespace frugal {
namespace {

std::string temp_path(const std::string& name) { return ::testing::TempDir() + "/" + name; }

LabelImage random_features(const Shape& shape, const std::array<double, 3>& spacing_mm, double share,
                           std::uint64_t seed) {
  LabelImage features(centred_geometry(shape, spacing_mm), 0);
  RandomStream random(seed);
  for (std::uint8_t& v : features.voxels()) v = random.uniform() < share ? 1 : 0;
  return features;
}

// OpenCV's exact Euclidean transform (DIST_L2 with DIST_MASK_PRECISE) measures, for every non-zero
// pixel, the distance to the nearest zero pixel: here the features are the zeros. Square pixels
// only, so the spacing is 1 mm; float output, hence the 1e-4 mm tolerance.
TEST(DistanceTransform, TwoDimensionalMatchesOpenCv) {
  for (double share : {0.002, 0.03, 0.3}) {
    const LabelImage features = random_features({53, 41, 1}, {1.0, 1.0, 2.0}, share, 17);
    const std::vector<double> ours = squared_distance_to_features_mm2(features.voxels(), features.shape(), {1.0, 1.0, 2.0});
    const cv::Mat not_feature = slice_view(features) == 0;
    cv::Mat reference;
    cv::distanceTransform(not_feature, reference, cv::DIST_L2, cv::DIST_MASK_PRECISE, CV_32F);
    for (int y = 0; y < 41; ++y)
      for (int x = 0; x < 53; ++x)
        ASSERT_NEAR(std::sqrt(ours[features.index(x, y)]), reference.at<float>(y, x), 1e-4)
            << "share " << share << " at " << x << "," << y;
  }
}

// scipy.ndimage.distance_transform_edt with per-axis sampling (Debian python3-scipy) on an
// anisotropic 3D grid: the distance from each non-feature voxel to the nearest feature voxel.
TEST(DistanceTransform, ThreeDimensionalAnisotropicMatchesScipy) {
  const std::array<double, 3> spacing{0.8, 1.1, 2.5};
  const LabelImage features = random_features({23, 19, 14}, spacing, 0.01, 23);
  write_nifti(features, temp_path("edt_features.nii.gz"));
  const std::string output = temp_path("edt_scipy.f64");
  const std::string command = std::string(FRUGAL_PYTHON) +
                              " -c \"import sys, numpy as np, nibabel as nib; from scipy import ndimage;"
                              " f = np.asarray(nib.load(sys.argv[1]).dataobj) != 0;"
                              " d = ndimage.distance_transform_edt(~f, sampling=(0.8, 1.1, 2.5));"
                              " d.astype(np.float64).ravel(order='F').tofile(sys.argv[2])\" " +
                              temp_path("edt_features.nii.gz") + " " + output;
  ASSERT_EQ(std::system(command.c_str()), 0) << command;
  std::vector<double> reference(features.size());
  std::ifstream(output, std::ios::binary)
      .read(reinterpret_cast<char*>(reference.data()), static_cast<std::streamsize>(reference.size() * sizeof(double)));
  const std::vector<double> ours = squared_distance_to_features_mm2(features.voxels(), features.shape(), spacing);
  for (std::size_t i = 0; i < ours.size(); ++i) ASSERT_NEAR(std::sqrt(ours[i]), reference[i], 1e-9) << "voxel " << i;
}

TEST(DistanceTransform, NoFeatureAndLoneFeature) {
  const Shape shape{5, 4, 3};
  std::vector<std::uint8_t> none(shape.voxel_count(), 0);
  for (double d : squared_distance_to_features_mm2(none, shape, {1.0, 1.0, 1.0})) EXPECT_EQ(d, std::numeric_limits<double>::infinity());
  std::vector<std::uint8_t> one(shape.voxel_count(), 0);
  one[0] = 1;
  const std::vector<double> d = squared_distance_to_features_mm2(one, shape, {1.0, 2.0, 3.0});
  // Voxel (4, 3, 2): (4 * 1)^2 + (3 * 2)^2 + (2 * 3)^2 = 16 + 36 + 36.
  EXPECT_DOUBLE_EQ(d.back(), 88.0);
}

}  // namespace
}  // namespace frugal
