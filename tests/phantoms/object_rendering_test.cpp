#include "phantoms/object_rendering.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/image_ops.h"
#include "experiments/measure/connected_components.h"
#include "phantoms/random.h"

namespace frugal {
namespace {

struct Drawn {
  RenderedObject rendered;
  FloatImage image;
};

template <class Object>
Drawn draw(const Object& object, const Shape& shape, const std::array<double, 3>& spacing) {
  Drawn drawn{{}, FloatImage(centred_geometry(shape, spacing), 0.0F)};
  InstanceImage instances(drawn.image.geometry(), 0);
  drawn.rendered = render(object, 1.0F, 1, drawn.image, instances);
  return drawn;
}

// Spheroid volume 4/3 pi a b^2, ellipse area pi a b and capsule volume pi r^2 (2h) + 4/3 pi r^3
// (handbook geometry). Supersampling a thin object on a lattice (3^3 in 3D, 4^2 in 2D) errs by a
// few percent for one placement (the lattice-point problem) but is unbiased over placements, so
// the check averages 60 random positions and orientations: mean ratio within 1%.
template <class MakeObject>
void expect_unbiased_volume(MakeObject make, int dims, double analytic, const char* what) {
  RandomStream random(31, 0, StreamPurpose::lesions);
  const Shape shape = dims == 2 ? Shape{40, 40, 1} : Shape{32, 32, 32};
  double ratio_sum = 0.0, labelled_sum = 0.0;
  const int placements = 60;
  for (int n = 0; n < placements; ++n) {
    std::array<double, 3> centre{random.uniform(-1, 1), random.uniform(-1, 1), dims == 2 ? 0.0 : random.uniform(-1, 1)};
    std::array<double, 3> direction{random.normal(), random.normal(), dims == 2 ? 0.0 : random.normal()};
    const double norm = std::sqrt(direction[0] * direction[0] + direction[1] * direction[1] + direction[2] * direction[2]);
    for (double& c : direction) c /= norm;
    const Drawn drawn = draw(make(centre, direction), shape, {1.0, 1.0, 1.0});
    ratio_sum += drawn.rendered.covered_voxels / analytic;
    labelled_sum += static_cast<double>(drawn.rendered.labelled_voxels) / analytic;
  }
  EXPECT_NEAR(ratio_sum / placements, 1.0, 0.01) << what << " (seed 31)";
  // Labelling voxels whose centre is inside is unbiased (the share of centres inside equals the
  // volume on average); the voxels added along the long axis can only add, by at most about one
  // voxel per voxel of axis length: for objects 2-3 voxels wide the mean ratio lies in [0.97, 1.15]
  // (partial-volume tolerance, common practice, no source).
  EXPECT_GE(labelled_sum / placements, 0.97) << what << " (seed 31)";
  EXPECT_LE(labelled_sum / placements, 1.15) << what << " (seed 31)";
}

TEST(ObjectRendering, PartialVolumeSumIsUnbiasedForSpheroidsEllipsesAndCapsules) {
  expect_unbiased_volume([](auto c, auto d) { return Spheroid{c, d, 4.0, 1.2}; }, 3, 4.0 / 3.0 * M_PI * 4.0 * 1.2 * 1.2,
                         "3D spheroid");
  expect_unbiased_volume([](auto c, auto d) { return Spheroid{c, d, 5.0, 1.0}; }, 2, M_PI * 5.0 * 1.0, "2D ellipse");
  expect_unbiased_volume([](auto c, auto d) { return Capsule{c, d, 8.0, 1.5}; }, 3,
                         M_PI * 1.5 * 1.5 * 16.0 + 4.0 / 3.0 * M_PI * 1.5 * 1.5 * 1.5, "3D capsule");
}

// However thin and slanted, every object is one 26-connected component and never vanishes.
TEST(ObjectRendering, ThinObjectsStayOneConnectedComponent) {
  RandomStream random(32, 0, StreamPurpose::lesions);
  for (int n = 0; n < 200; ++n) {
    std::array<double, 3> direction{random.normal(), random.normal(), random.normal()};
    const double norm = std::sqrt(direction[0] * direction[0] + direction[1] * direction[1] + direction[2] * direction[2]);
    for (double& c : direction) c /= norm;
    const Spheroid thin{{random.uniform(-1, 1), random.uniform(-1, 1), random.uniform(-1, 1)}, direction,
                        random.uniform(1.5, 6.0), random.uniform(0.3, 0.7)};
    FloatImage image(centred_geometry({24, 24, 24}, {1.0, 1.0, 1.0}), 0.0F);
    InstanceImage instances(image.geometry(), 0);
    render(thin, 1.0F, 1, image, instances);
    Image<std::uint8_t> mask(image.geometry(), 0);
    for (std::size_t v = 0; v < mask.size(); ++v) mask.data()[v] = instances.data()[v] != 0 ? 1 : 0;
    EXPECT_EQ(measure::label_components(mask, {26}).count, 1) << "object " << n << " (seed 32)";
  }
}

TEST(ObjectRendering, SmallVoxelsConvergeToTheEllipseArea) {
  const double angle = 0.7;
  const Spheroid lesion{{0.25, 0.4, 0.0}, {std::cos(angle), std::sin(angle), 0.0}, 5.0, 1.0};
  const Drawn drawn = draw(lesion, {80, 80, 1}, {0.25, 0.25, 2.0});  // 16 voxels across the ellipse
  const double area_mm2 = M_PI * 5.0 * 1.0;
  EXPECT_NEAR(drawn.rendered.covered_voxels * 0.0625, area_mm2, 0.01 * area_mm2);
}

TEST(ObjectRendering, ContrastIsAddedInProportionToCoverage) {
  const Spheroid dot{{0.0, 0.0, 0.0}, {1.0, 0.0, 0.0}, 3.0, 3.0};
  const Drawn drawn = draw(dot, {16, 16, 1}, {1.0, 1.0, 1.0});
  double sum = 0.0;
  for (float v : drawn.image.voxels()) {
    EXPECT_GE(v, 0.0F);
    EXPECT_LE(v, 1.0F);
    sum += v;
  }
  EXPECT_NEAR(sum, drawn.rendered.covered_voxels, 1e-3);
}

// Closest distance between segments: textbook cases (parallel, crossing, skew, end points).
TEST(SegmentDistance, TextbookCases) {
  EXPECT_NEAR(segment_distance({0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {1, 1, 0}), 1.0, 1e-12);
  EXPECT_NEAR(segment_distance({-1, 0, 0}, {1, 0, 0}, {0, -1, 0}, {0, 1, 0}), 0.0, 1e-12);
  EXPECT_NEAR(segment_distance({-1, 0, 0}, {1, 0, 0}, {0, -1, 2}, {0, 1, 2}), 2.0, 1e-12);
  EXPECT_NEAR(segment_distance({0, 0, 0}, {1, 0, 0}, {3, 4, 0}, {3, 8, 0}), std::hypot(2.0, 4.0), 1e-12);
}

}  // namespace
}  // namespace frugal
