#include "phantoms/tube.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

#include "phantoms/image_ops.h"
#include "phantoms/object_rendering.h"

namespace frugal {
namespace {

using Vec = std::array<double, 3>;

struct Drawn {
  RenderedObject rendered;
  double voxel_volume_mm3 = 0.0;
};

// Renders `tube` with contrast 1 on a grid of `spacing` mm centred on the origin.
Drawn draw(const Tube& tube, const Shape& shape, double spacing) {
  FloatImage image(centred_geometry(shape, {spacing, spacing, spacing}), 0.0F);
  InstanceImage instances(image.geometry(), 0);
  Drawn drawn;
  drawn.rendered = render(tube, 1.0F, 1, image, instances);
  drawn.voxel_volume_mm3 = image.geometry().voxel_volume_mm3();
  return drawn;
}

Tube centred(Tube tube) {
  const Vec middle = tube.point(0.5 * tube.length_mm());
  RigidPose shift;
  for (std::size_t axis = 0; axis < 3; ++axis) shift.shift_mm[axis] = -middle[axis];
  return tube.moved(shift);
}

// Circle geometry (from memory): a quarter arc of radius R from the origin along x, bending
// towards y, ends at (R, R) with its tangent along y.
TEST(Tube, QuarterArcEndsWhereCircleGeometrySays) {
  const TubePiece piece = start_tube({0, 0, 0}, {1, 0, 0}, 0.5 * M_PI * 20.0, 0.5 * M_PI, {0, 1, 0}, 1.0, 1.0);
  EXPECT_NEAR(piece.curvature_per_mm, 1.0 / 20.0, 1e-12);
  const Vec end = piece.end_mm(), tangent = piece.tangent_at(piece.length_mm);
  EXPECT_NEAR(end[0], 20.0, 1e-9);
  EXPECT_NEAR(end[1], 20.0, 1e-9);
  EXPECT_NEAR(tangent[0], 0.0, 1e-12);
  EXPECT_NEAR(tangent[1], 1.0, 1e-12);
  // Inside on the centreline, outside just past the surface, and outside beyond either end disc.
  EXPECT_LT(piece.level(piece.point(10.0)), -0.99);
  const Vec n = piece.normal_at(10.0), c = piece.point(10.0);
  EXPECT_GT(piece.level({c[0] + 1.05 * n[0], c[1] + 1.05 * n[1], 0.0}), 0.0);
  EXPECT_LT(piece.level({c[0] + 0.95 * n[0], c[1] + 0.95 * n[1], 0.0}), 0.0);
  EXPECT_GT(piece.level({-0.1, 0.0, 0.0}), 0.0);
  EXPECT_GT(piece.level({20.0, 20.1, 0.0}), 0.0);
}

// A straight tapered piece is a frustum: V = pi h (r0^2 + r0 r1 + r1^2) / 3 (handbook geometry,
// from memory). Rendered at 0.25 mm voxels (about 21,000 voxels) the supersampled coverage and
// the voxel-centre count must both be within 1% (partial-volume tolerance, common practice, no source).
TEST(Tube, StraightTaperedPieceHasTheFrustumVolume) {
  Tube tube;
  tube.pieces.push_back(start_tube({-10.0, 0.3, -0.2}, {1.0, 0.2, 0.1}, 20.0, 0.0, {0, 1, 0}, 3.0, 1.5));
  const double frustum = M_PI * 20.0 * (9.0 + 4.5 + 2.25) / 3.0;  // 329.87 mm^3
  EXPECT_NEAR(tube.volume_mm3(), frustum, 1e-9);
  const Drawn drawn = draw(centred(tube), {100, 40, 40}, 0.25);
  std::printf("frustum: coverage / analytic %.4f, labelled / analytic %.4f\n",
              drawn.rendered.covered_voxels * drawn.voxel_volume_mm3 / frustum,
              static_cast<double>(drawn.rendered.labelled_voxels) * drawn.voxel_volume_mm3 / frustum);
  EXPECT_NEAR(drawn.rendered.covered_voxels * drawn.voxel_volume_mm3 / frustum, 1.0, 0.01);
  EXPECT_NEAR(static_cast<double>(drawn.rendered.labelled_voxels) * drawn.voxel_volume_mm3 / frustum, 1.0, 0.01);
}

// Three arcs bending alternately in 3D, tapering 2 mm -> 1 mm over 36 mm: a disc swept along an
// arc of bend radius larger than the disc has volume integral pi r(s)^2 ds (Pappus's centroid
// theorem, from memory), so the chain's volume is the frustum's pi L (r0^2 + r0 r1 + r1^2) / 3
// with L = 36 mm, whatever the bends: 263.89 mm^3. Tolerance 1.5% at 0.3 mm voxels.
TEST(Tube, CurvedTaperedTubeHasTheSweptDiscVolume) {
  Tube tube;
  tube.pieces.push_back(start_tube({0, 0, 0}, {1, 0, 0}, 12.0, 0.9, {0, 1, 0}, 2.0, 2.0 - 1.0 / 3.0));
  tube.pieces.push_back(continue_tube(tube.pieces.back(), 12.0, -0.9, {0, 0.6, 0.8}, 2.0 - 2.0 / 3.0));
  tube.pieces.push_back(continue_tube(tube.pieces.back(), 12.0, 0.7, {0, 0, 1}, 1.0));
  for (const TubePiece& piece : tube.pieces) EXPECT_GT(piece.curvature_per_mm, 0.05);  // really bent
  const double swept = M_PI * 36.0 * (4.0 + 2.0 + 1.0) / 3.0;
  EXPECT_NEAR(tube.volume_mm3(), swept, 1e-9);
  // The pieces join: each starts where the previous ends, with its tangent.
  for (std::size_t n = 1; n < tube.pieces.size(); ++n) {
    const Vec end = tube.pieces[n - 1].end_mm(), tangent = tube.pieces[n - 1].tangent_at(12.0);
    for (std::size_t axis = 0; axis < 3; ++axis) {
      EXPECT_NEAR(tube.pieces[n].start_mm[axis], end[axis], 1e-9);
      EXPECT_NEAR(tube.pieces[n].tangent[axis], tangent[axis], 1e-9);
    }
  }
  const Drawn drawn = draw(centred(tube), {120, 120, 120}, 0.3);
  std::printf("curved tube: coverage / analytic %.4f, labelled / analytic %.4f\n",
              drawn.rendered.covered_voxels * drawn.voxel_volume_mm3 / swept,
              static_cast<double>(drawn.rendered.labelled_voxels) * drawn.voxel_volume_mm3 / swept);
  EXPECT_NEAR(drawn.rendered.covered_voxels * drawn.voxel_volume_mm3 / swept, 1.0, 0.015);
  EXPECT_NEAR(static_cast<double>(drawn.rendered.labelled_voxels) * drawn.voxel_volume_mm3 / swept, 1.0, 0.015);
}

// In the plane the swept region of a bent tapered tube has area integral 2 r(s) ds = L (r0 + r1)
// (the same argument in 2D, from memory): 30 mm x (1.5 + 0.5) mm = 60 mm^2. Averaged over 20
// placements at 0.5 mm pixels (a thin shape: lattice error averages out), mean within 1%.
TEST(Tube, CurvedTaperedTubeInThePlaneHasTheSweptArea) {
  double coverage_sum = 0.0;
  const int placements = 20;
  for (int n = 0; n < placements; ++n) {
    const double angle = 0.31 * n;
    const Vec along{std::cos(angle), std::sin(angle), 0.0}, across{-std::sin(angle), std::cos(angle), 0.0};
    Tube tube;
    tube.pieces.push_back(start_tube({0.07 * n, -0.05 * n, 0}, along, 10.0, 0.8, across, 1.5, 1.5 - 1.0 / 3.0));
    Vec t = tube.pieces.back().tangent_at(10.0);
    tube.pieces.push_back(continue_tube(tube.pieces.back(), 10.0, -1.0, {-t[1], t[0], 0.0}, 1.5 - 2.0 / 3.0));
    t = tube.pieces.back().tangent_at(10.0);
    tube.pieces.push_back(continue_tube(tube.pieces.back(), 10.0, 0.6, {-t[1], t[0], 0.0}, 0.5));
    EXPECT_NEAR(tube.area_mm2(), 60.0, 1e-9);
    const Drawn drawn = draw(centred(tube), {90, 90, 1}, 0.5);
    coverage_sum += drawn.rendered.covered_voxels * 0.25 / 60.0;
  }
  std::printf("curved tube in the plane: mean coverage / analytic %.4f\n", coverage_sum / placements);
  EXPECT_NEAR(coverage_sum / placements, 1.0, 0.01);
}

}  // namespace
}  // namespace frugal
