#include "experiments/measure/overlap.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <random>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

Image<std::uint8_t> blank(int x, int y, int z = 1, std::array<double, 3> spacing = {1, 1, 1}) {
  Geometry geometry;
  geometry.shape = {x, y, z};
  geometry.spacing_mm = spacing;
  return Image<std::uint8_t>(geometry, 0);
}

// Sets rows [row0, row1) x columns [col0, col1) in slice z (numpy-style half-open ranges).
void fill(Image<std::uint8_t>& mask, int row0, int row1, int col0, int col1, int z = 0) {
  for (int row = row0; row < row1; ++row) {
    for (int col = col0; col < col1; ++col) mask.at(col, row, z) = 1;
  }
}

TEST(Overlap, DiceJaccardHausdorff2D) {
  // A = rows 1-4 x cols 1-4, B = rows 2-5 x cols 2-6 on 8x8; values from numpy and
  // scipy.spatial.distance (dice, jaccard, directed_hausdorff) on the same masks.
  Image<std::uint8_t> a = blank(8, 8);
  Image<std::uint8_t> b = blank(8, 8);
  fill(a, 1, 5, 1, 5);
  fill(b, 2, 6, 2, 7);
  const OverlapResult result = overlap(a, b);
  EXPECT_EQ(result.intersection_voxels, 9u);  // numpy [C]
  EXPECT_NEAR(result.dice, 0.5, 1e-12);        // scipy 1 - dice [C]
  EXPECT_NEAR(result.jaccard, 1.0 / 3.0, 1e-12);  // scipy 1 - jaccard [C]
  // scipy.spatial.distance.directed_hausdorff: h(A,B) = sqrt 2, h(B,A) = sqrt 5 [C]; the same
  // on boundary pixels for this pair.
  EXPECT_NEAR(result.hausdorff_mm, std::sqrt(5.0), 1e-12);
}

TEST(Overlap, JaccardDiceIdentityOnRandomMasks) {
  // J = D / (2 - D): exact algebra of the two definitions.
  const std::uint32_t seed = 20240611;
  SCOPED_TRACE("seed " + std::to_string(seed));
  std::mt19937 generator(seed);
  std::bernoulli_distribution coin(0.3);
  for (int trial = 0; trial < 20; ++trial) {
    Image<std::uint8_t> a = blank(9, 7, 5);
    Image<std::uint8_t> b = blank(9, 7, 5);
    for (std::size_t i = 0; i < a.size(); ++i) {
      a.voxels()[i] = coin(generator) ? 1 : 0;
      b.voxels()[i] = coin(generator) ? 1 : 0;
    }
    const OverlapResult result = overlap(a, b);
    EXPECT_NEAR(result.jaccard, result.dice / (2.0 - result.dice), 1e-12);
  }
}

TEST(Overlap, AnisotropicVolumeMatchesScipy) {
  // Arrays in numpy (z, y, x) order: A[1:4, 2:6, 1:5] plus voxel (5, 6, 7), B[2:5, 1:5, 3:7];
  // spacing z 2.5, y 0.7, x 1.2 mm. Reference: surface voxels by scipy.ndimage.binary_erosion
  // (6-neighbour cross, zero padding), distances by scipy directed_hausdorff and
  // numpy.percentile [C].
  Image<std::uint8_t> a = blank(8, 7, 6, {1.2, 0.7, 2.5});
  Image<std::uint8_t> b = blank(8, 7, 6, {1.2, 0.7, 2.5});
  for (int z = 1; z < 4; ++z) fill(a, 2, 6, 1, 5, z);
  a.at(7, 6, 5) = 1;
  for (int z = 2; z < 5; ++z) fill(b, 1, 5, 3, 7, z);
  const OverlapResult result = overlap(a, b);
  EXPECT_NEAR(result.dice, 0.24742268041237114, 1e-12);
  EXPECT_NEAR(result.jaccard, 0.1411764705882353, 1e-12);
  EXPECT_NEAR(result.hausdorff_mm, 3.5355339059327373, 1e-9);
  EXPECT_NEAR(result.percentile_hausdorff_mm, 3.465544690232691, 1e-9);
}

TEST(Overlap, EmptyMasksFollowTheStatedConvention) {
  const Image<std::uint8_t> empty = blank(4, 4);
  Image<std::uint8_t> one = blank(4, 4);
  one.at(1, 1) = 1;
  EXPECT_DOUBLE_EQ(overlap(empty, empty).dice, 1.0);
  EXPECT_DOUBLE_EQ(overlap(empty, empty).hausdorff_mm, 0.0);
  EXPECT_DOUBLE_EQ(overlap(empty, one).dice, 0.0);
  EXPECT_TRUE(std::isinf(overlap(empty, one).hausdorff_mm));
  EXPECT_DOUBLE_EQ(overlap(one, one).hausdorff_mm, 0.0);
}

TEST(Overlap, RejectsDifferentGrids) {
  EXPECT_THROW(overlap(blank(4, 4), blank(4, 5)), UserError);
  EXPECT_THROW(overlap(blank(4, 4, 1, {1, 1, 1}), blank(4, 4, 1, {0.5, 1, 1})), UserError);
}

}  // namespace
}  // namespace frugal::measure
