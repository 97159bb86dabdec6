#include "corruptors/object_regions.h"

#include <gtest/gtest.h>

#include <cmath>
#include <opencv2/imgproc.hpp>

#include "phantoms/image_views.h"
#include "phantoms/phantom.h"

namespace frugal {
namespace {

ScenarioOptions scenario(Family family, int dims) {
  ScenarioOptions s = default_scenario(family);
  s.geometry.dims = dims;
  s.geometry.size_2d = {96, 96};
  s.geometry.size_3d = {40, 40, 32};
  return s;
}

// Each object's region holds exactly the voxels the phantom labelled with it: their volume is the
// record's mask_volume_mm3, read back by the phantom from its own instance map (acquisition.h).
// Rescans (new pose) included.
TEST(ObjectRegions, EveryObjectGetsExactlyItsLabelledVoxels) {
  for (int dims : {2, 3})
    for (int rescan : {0, 1})
      for (int n = 0; n < 6; ++n) {
        const Subject subject = generate_subject(scenario(Family::streaks, dims), 21, n, rescan);
        const std::vector<ObjectRegion> regions = object_regions(subject);
        ASSERT_EQ(regions.size(), subject.truth.objects.size()) << "dims " << dims << " subject " << n;
        std::vector<std::uint8_t> used(subject.labels.size(), 0);
        for (const ObjectRegion& region : regions) {
          const ObjectRecord& o = subject.truth.objects[static_cast<std::size_t>(region.object)];
          EXPECT_NEAR(static_cast<double>(region.voxels.size()) * subject.labels.geometry().voxel_volume_mm3(),
                      o.mask_volume_mm3, 1e-6)
              << "dims " << dims << " subject " << n << " object " << o.id;
          for (std::size_t i : region.voxels) {
            EXPECT_EQ(used[i], 0) << "two objects share voxel " << i;
            used[i] = 1;
          }
        }
      }
}

// Without records (voids), the regions are the 8-connected components of the lesion label, as
// OpenCV's cv::connectedComponents counts them (its count includes the background label 0).
TEST(ObjectRegions, VoidsRegionsAreTheLesionComponents) {
  for (int n = 0; n < 4; ++n) {
    const Subject subject = generate_subject(scenario(Family::voids, 2), 5, n);
    const std::vector<ObjectRegion> regions = object_regions(subject);
    cv::Mat components;
    const int expected = cv::connectedComponents(slice_view(subject.labels) == kLesion, components, 8) - 1;
    EXPECT_EQ(static_cast<int>(regions.size()), expected) << "subject " << n;
    std::size_t voxels = 0;
    for (const ObjectRegion& region : regions) {
      EXPECT_EQ(region.object, -1);
      voxels += region.voxels.size();
    }
    std::size_t lesion = 0;
    for (std::uint8_t v : subject.labels.voxels()) lesion += v == kLesion;
    EXPECT_EQ(voxels, lesion);
  }
}

TEST(ObjectRegions, VoxelCoordinatesInvertWorldCoordinates) {
  Geometry g;
  g.shape = {10, 12, 14};
  g.spacing_mm = {0.7, 1.3, 2.0};
  g.origin_mm = {-3.0, 4.0, 11.0};
  const double c = std::cos(0.4), s = std::sin(0.4);
  g.direction = {c, -s, 0, s, c, 0, 0, 0, 1};
  const std::array<double, 3> world = g.world_mm(2.25, 7.5, 3.75);
  const std::array<double, 3> voxel = voxel_coordinates(g, world);
  EXPECT_NEAR(voxel[0], 2.25, 1e-12);
  EXPECT_NEAR(voxel[1], 7.5, 1e-12);
  EXPECT_NEAR(voxel[2], 3.75, 1e-12);
}

}  // namespace
}  // namespace frugal
