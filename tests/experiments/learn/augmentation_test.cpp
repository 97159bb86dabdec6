// Sampling grids and warps of the geometric augmentation: exactness of the identity, the flips and
// linear interpolation, rigidity and bounds of rotations, the SD and smoothness of the
// displacement, determinism, and the cases the scipy reference check compares
// (tests/python/augmentation_reference_test.py). Seeds are fixed and printed on failure.
#include "experiments/learn/augmentation.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <ostream>
#include <string>
#include <vector>

namespace frugal::learn {
namespace {

constexpr std::uint64_t kSeed = 20240611;
constexpr double kPi = 3.14159265358979323846;

RandomStream stream(std::uint64_t repeat) { return RandomStream(kSeed, repeat, StreamPurpose::pattern); }

std::string seed_text(std::uint64_t repeat) {
  return "seed " + std::to_string(kSeed) + ", repeat " + std::to_string(repeat);
}

struct Case {
  const char* name;
  Shape shape;
  std::array<double, 3> spacing_mm;
};

// Failure messages name the case instead of dumping its bytes.
void PrintTo(const Case& c, std::ostream* out) { *out << c.name; }

Geometry geometry_of(const Case& c) {
  Geometry geometry;
  geometry.shape = c.shape;
  geometry.spacing_mm = c.spacing_mm;
  return geometry;
}

std::vector<float> random_image(const Shape& shape, std::uint64_t repeat) {
  RandomStream random = stream(1000 + repeat);
  std::vector<float> image(shape.voxel_count());
  for (float& value : image) value = static_cast<float>(random.uniform(-1.0, 1.0));
  return image;
}

std::size_t voxel_index(const Shape& shape, int x, int y, int z) {
  return (static_cast<std::size_t>(z) * static_cast<std::size_t>(shape.y) + static_cast<std::size_t>(y)) *
             static_cast<std::size_t>(shape.x) +
         static_cast<std::size_t>(x);
}

// Position of voxel (x, y, z) in the grid, 0 for the z of a 2D grid.
std::array<double, 3> position_of(const SamplingGrid& grid, int x, int y, int z) {
  const auto dims = static_cast<std::size_t>(grid.shape.dims());
  const float* p = grid.positions.data() + voxel_index(grid.shape, x, y, z) * dims;
  return {p[0], p[1], dims == 3 ? p[2] : 0.0};
}

AugmentationOptions only(bool flips, double rotation_degrees, double deformation_mm, double spacing_mm = 16.0) {
  AugmentationOptions options;
  options.flips = flips;
  options.rotation_degrees = rotation_degrees;
  options.deformation_mm = deformation_mm;
  options.deformation_spacing_mm = spacing_mm;
  return options;
}

// ---------------------------------------------------------------------------------------------
// validate()

TEST(AugmentationOptionsTest, DefaultsAndRangeEdgesAreValid) {
  EXPECT_EQ(AugmentationOptions{}.validate(), "");
  EXPECT_EQ(only(true, 45.0, 20.0, 2.0).validate(), "");
  EXPECT_EQ(only(false, 0.0, 0.0, 1000.0).validate(), "");
}

TEST(AugmentationOptionsTest, RejectsValuesOutsideTheirRanges) {
  // Message format fixed by the header's contract (key path, value, allowed range).
  EXPECT_EQ(only(true, 60.0, 0.0).validate(), "rotation_degrees = 60: allowed [0, 45]");
  EXPECT_EQ(only(true, -1.0, 0.0).validate(), "rotation_degrees = -1: allowed [0, 45]");
  EXPECT_EQ(only(true, 0.0, 20.5).validate(), "deformation_mm = 20.5: allowed [0, 20]");
  EXPECT_EQ(only(true, 0.0, -0.1).validate(), "deformation_mm = -0.1: allowed [0, 20]");
  EXPECT_EQ(only(true, 0.0, 1.0, 1.5).validate(), "deformation_spacing_mm = 1.5: allowed [2, 1000]");
  EXPECT_EQ(only(true, 0.0, 1.0, 2000.0).validate(),
            "deformation_spacing_mm = 2000: allowed [2, 1000]");
  EXPECT_NE(only(true, std::nan(""), 0.0).validate(), "");
  EXPECT_NE(only(true, 0.0, HUGE_VAL).validate(), "");
  EXPECT_NE(only(true, 0.0, 1.0, HUGE_VAL).validate(), "");
}

// ---------------------------------------------------------------------------------------------
// Warps on hand-made grids

TEST(WarpTest, NearestRoundsHalvesUpAndClamps) {
  // floor(x + 0.5) with clamping: the header's contract (common practice, no source).
  const Shape shape{5, 2, 1};
  const std::vector<float> image = {10, 11, 12, 13, 14, 20, 21, 22, 23, 24};
  SamplingGrid grid;
  grid.shape = shape;
  grid.positions = {0.49999997F, 0.0F, 0.5F, 0.0F, 2.5F, 0.49F, 3.4999998F, 0.5F, -0.7F, 7.0F,
                    4.6F,        0.0F, -3.F, -2.F, 1.0F, 1.0F,  3.0F,       1.0F, 99.F,  99.F};
  std::vector<float> result(shape.voxel_count());
  warp_nearest(image.data(), result.data(), grid);
  EXPECT_EQ(result, (std::vector<float>{10, 11, 13, 23, 20, 14, 10, 21, 23, 24}));
}

TEST(WarpTest, LinearBlendsAndReplicatesEdges) {
  // Bilinear weights by hand (common practice, no source); outside positions take the edge value.
  const Shape shape{2, 2, 1};
  const std::vector<float> image = {0, 1, 10, 11};
  SamplingGrid grid;
  grid.shape = shape;
  grid.positions = {0.25F, 0.5F, -5.0F, 0.5F, 1.0F, 7.0F, 0.5F, -1.0F};
  std::vector<float> result(shape.voxel_count());
  warp_linear(image.data(), result.data(), grid);
  EXPECT_FLOAT_EQ(result[0], 5.25F);
  EXPECT_FLOAT_EQ(result[1], 5.0F);
  EXPECT_FLOAT_EQ(result[2], 11.0F);
  EXPECT_FLOAT_EQ(result[3], 0.5F);
}

TEST(WarpTest, OneVoxelThickAxesAreHandled) {
  // A 1 x n image: every x position reads column 0 (edge replication, common practice, no source).
  const Shape shape{1, 3, 1};
  const std::vector<float> image = {1, 2, 4};
  SamplingGrid grid;
  grid.shape = shape;
  grid.positions = {0.7F, 0.5F, -2.0F, 1.5F, 3.0F, 2.0F};
  std::vector<float> result(shape.voxel_count());
  warp_linear(image.data(), result.data(), grid);
  EXPECT_EQ(result, (std::vector<float>{1.5F, 3.0F, 4.0F}));
}

// ---------------------------------------------------------------------------------------------
// Families of shapes: square and anisotropic 2D, cube and anisotropic 3D.

class AugmentationTest : public testing::TestWithParam<Case> {};

TEST_P(AugmentationTest, IdentityGridReproducesTheImageExactly) {
  // Sampling every voxel at itself is a copy (definition of the identity; no source needed).
  const Shape shape = GetParam().shape;
  const SamplingGrid grid = identity_grid(shape);
  ASSERT_EQ(grid.positions.size(), shape.voxel_count() * static_cast<std::size_t>(shape.dims()));
  const std::vector<float> image = random_image(shape, 0);
  std::vector<float> linear(image.size()), nearest(image.size());
  warp_linear(image.data(), linear.data(), grid);
  warp_nearest(image.data(), nearest.data(), grid);
  EXPECT_EQ(linear, image);
  EXPECT_EQ(nearest, image);
}

TEST_P(AugmentationTest, AllOptionsOffGiveTheIdentityAndDrawNothing) {
  const Shape shape = GetParam().shape;
  RandomStream random = stream(1);
  const SamplingGrid grid = random_grid(geometry_of(GetParam()), only(false, 0.0, 0.0), random);
  EXPECT_EQ(grid.positions, identity_grid(shape).positions);
  RandomStream untouched = stream(1);
  EXPECT_EQ(random.next_u64(), untouched.next_u64()) << "random_grid drew numbers for disabled parts";
}

TEST_P(AugmentationTest, LinearInterpolationIsExactOnAffineFunctions) {
  // Multilinear interpolation reproduces affine functions exactly, and clamping reads the affine
  // function at the clamped position (property of linear interpolation; common practice, no source).
  const Shape shape = GetParam().shape;
  const int dims = shape.dims();
  const double slope[3] = {0.37, -0.81, 0.29};
  const double intercept = 1.5;
  const auto affine = [&](const double* p) {
    double value = intercept;
    for (int a = 0; a < dims; ++a) value += slope[a] * p[a];
    return value;
  };
  std::vector<float> image(shape.voxel_count());
  for (int z = 0; z < shape.z; ++z)
    for (int y = 0; y < shape.y; ++y)
      for (int x = 0; x < shape.x; ++x) {
        const double p[3] = {static_cast<double>(x), static_cast<double>(y), static_cast<double>(z)};
        image[voxel_index(shape, x, y, z)] = static_cast<float>(affine(p));
      }
  const int extent[3] = {shape.x, shape.y, shape.z};
  SamplingGrid grid;
  grid.shape = shape;
  grid.positions.resize(shape.voxel_count() * static_cast<std::size_t>(dims));
  RandomStream random = stream(2);
  for (std::size_t v = 0; v < shape.voxel_count(); ++v)
    for (int a = 0; a < dims; ++a) {
      float& value = grid.positions[v * static_cast<std::size_t>(dims) + static_cast<std::size_t>(a)];
      value = static_cast<float>(random.uniform(-2.0, extent[a] + 1.0));  // about 1 in 10 outside
    }
  std::vector<float> result(shape.voxel_count());
  warp_linear(image.data(), result.data(), grid);
  for (std::size_t v = 0; v < shape.voxel_count(); ++v) {
    double clamped[3];
    for (int a = 0; a < dims; ++a)
      clamped[a] = std::clamp(
          static_cast<double>(grid.positions[v * static_cast<std::size_t>(dims) + static_cast<std::size_t>(a)]), 0.0,
          extent[a] - 1.0);
    // Float voxels of magnitude <= 40: rounding of the blend stays below 1e-5 relative.
    const double expected = affine(clamped);
    ASSERT_NEAR(result[v], expected, 1e-5 * std::max(1.0, std::abs(expected))) << "voxel " << v << ", " << seed_text(2);
  }
}

TEST_P(AugmentationTest, FlipsMirrorExactlyLikeCopyFlipped) {
  // Mirroring maps x to n - 1 - x (the header's contract); the warp of a flip-only grid must be the
  // plain mirrored copy, bit for bit.
  const Shape shape = GetParam().shape;
  const Geometry geometry = geometry_of(GetParam());
  const std::vector<float> image = random_image(shape, 3);
  std::vector<bool> seen(8, false);
  for (std::uint64_t repeat = 0; repeat < 48; ++repeat) {
    RandomStream for_grid = stream(repeat);
    RandomStream for_flips = stream(repeat);
    const SamplingGrid grid = random_grid(geometry, only(true, 0.0, 0.0), for_grid);
    bool flip[3];
    draw_flips(shape, for_flips, flip);
    EXPECT_EQ(for_grid.next_u64(), for_flips.next_u64()) << "random_grid drew other numbers than draw_flips";
    seen[(flip[0] ? 1U : 0U) | (flip[1] ? 2U : 0U) | (flip[2] ? 4U : 0U)] = true;
    if (shape.dims() == 2) {
      EXPECT_FALSE(flip[2]);
    }
    std::vector<float> expected(image.size()), linear(image.size()), nearest(image.size());
    copy_flipped(image.data(), expected.data(), shape, flip);
    warp_linear(image.data(), linear.data(), grid);
    warp_nearest(image.data(), nearest.data(), grid);
    ASSERT_EQ(linear, expected) << seed_text(repeat);
    ASSERT_EQ(nearest, expected) << seed_text(repeat);
    const std::array<double, 3> corner = position_of(grid, 0, 0, 0);
    EXPECT_EQ(corner[0], flip[0] ? shape.x - 1.0 : 0.0) << seed_text(repeat);
    EXPECT_EQ(corner[1], flip[1] ? shape.y - 1.0 : 0.0) << seed_text(repeat);
  }
  for (std::size_t combination = 0; combination < (shape.dims() == 2 ? 4U : 8U); ++combination)
    EXPECT_TRUE(seen[combination]) << "flip combination " << combination << " never drawn in 48 streams";
}

TEST(CopyFlippedTest, MirrorsEachAxis) {
  // Written out by hand (definition of mirroring; no source needed).
  const Shape shape{3, 2, 2};
  std::vector<float> image(shape.voxel_count());
  for (std::size_t v = 0; v < image.size(); ++v) image[v] = static_cast<float>(v);
  std::vector<float> result(image.size());
  const bool flip_x[3] = {true, false, false};
  copy_flipped(image.data(), result.data(), shape, flip_x);
  EXPECT_EQ(result, (std::vector<float>{2, 1, 0, 5, 4, 3, 8, 7, 6, 11, 10, 9}));
  const bool flip_yz[3] = {false, true, true};
  copy_flipped(image.data(), result.data(), shape, flip_yz);
  EXPECT_EQ(result, (std::vector<float>{9, 10, 11, 6, 7, 8, 3, 4, 5, 0, 1, 2}));
}

// The rotation in mm recovered from an affine grid: column b is the mm step of the sampled
// position per mm step along output axis b.
std::array<std::array<double, 3>, 3> rotation_in_mm(const SamplingGrid& grid, const std::array<double, 3>& spacing) {
  std::array<std::array<double, 3>, 3> rotation{};
  const std::array<double, 3> origin = position_of(grid, 0, 0, 0);
  for (int b = 0; b < grid.shape.dims(); ++b) {
    const std::array<double, 3> step = position_of(grid, b == 0 ? 1 : 0, b == 1 ? 1 : 0, b == 2 ? 1 : 0);
    for (int a = 0; a < grid.shape.dims(); ++a) rotation[a][b] = (step[a] - origin[a]) * spacing[a] / spacing[b];
  }
  if (grid.shape.dims() == 2) rotation[2][2] = 1.0;
  return rotation;
}

TEST_P(AugmentationTest, RotationIsRigidAboutTheCentreAndWithinItsBound) {
  // A rotation preserves distances in mm and fixes the centre ((n - 1) / 2), so sampled positions
  // of voxels mirrored through the centre average to the centre (definition of a rotation about a
  // point; no source needed). Angles are recovered for the documented order R = Rz Ry Rx.
  const Case& c = GetParam();
  const Shape shape = c.shape;
  const int dims = shape.dims();
  const double bound_degrees = 20.0;
  const double min_spacing = std::min({c.spacing_mm[0], c.spacing_mm[1], dims == 3 ? c.spacing_mm[2] : 1e9});
  double largest[3] = {0.0, 0.0, 0.0};
  for (std::uint64_t repeat = 0; repeat < 60; ++repeat) {
    RandomStream random = stream(repeat);
    const SamplingGrid grid = random_grid(geometry_of(c), only(false, bound_degrees, 0.0), random);
    RandomStream pairs = stream(500 + repeat);
    const auto random_voxel = [&]() {
      return std::array<int, 3>{static_cast<int>(pairs.uniform_int(0, shape.x - 1)),
                                static_cast<int>(pairs.uniform_int(0, shape.y - 1)),
                                static_cast<int>(pairs.uniform_int(0, shape.z - 1))};
    };
    for (int pair = 0; pair < 200; ++pair) {
      const std::array<int, 3> p = random_voxel(), q = random_voxel();
      const std::array<double, 3> sp = position_of(grid, p[0], p[1], p[2]), sq = position_of(grid, q[0], q[1], q[2]);
      double before = 0.0, after = 0.0;
      for (int a = 0; a < dims; ++a) {
        before += std::pow((p[a] - q[a]) * c.spacing_mm[a], 2);
        after += std::pow((sp[a] - sq[a]) * c.spacing_mm[a], 2);
      }
      // 1e-4 voxels of the finest axis; float positions of magnitude < 64 round to about 4e-6.
      ASSERT_NEAR(std::sqrt(after), std::sqrt(before), 1e-4 * min_spacing) << seed_text(repeat);
      const std::array<double, 3> mirrored =
          position_of(grid, shape.x - 1 - p[0], shape.y - 1 - p[1], shape.z - 1 - p[2]);
      const double centre[3] = {0.5 * (shape.x - 1), 0.5 * (shape.y - 1), 0.5 * (shape.z - 1)};
      for (int a = 0; a < dims; ++a) ASSERT_NEAR(0.5 * (sp[a] + mirrored[a]), centre[a], 1e-4) << seed_text(repeat);
    }
    const auto r = rotation_in_mm(grid, c.spacing_mm);
    double angles[3];
    if (dims == 2) {
      angles[0] = std::atan2(r[1][0], r[0][0]);
      angles[1] = angles[2] = 0.0;
    } else {
      angles[0] = std::atan2(r[2][1], r[2][2]);  // about x
      angles[1] = std::asin(-r[2][0]);           // about y
      angles[2] = std::atan2(r[1][0], r[0][0]);  // about z
    }
    for (int k = 0; k < 3; ++k) {
      const double degrees = angles[k] * 180.0 / kPi;
      EXPECT_LE(std::abs(degrees), bound_degrees + 1e-3) << "angle " << k << ", " << seed_text(repeat);
      largest[k] = std::max(largest[k], std::abs(degrees));
    }
  }
  // Uniform angles: the largest of 60 stays below 0.8 of the bound with probability 0.8^60 < 2e-6.
  for (int k = 0; k < (dims == 2 ? 1 : 3); ++k) EXPECT_GT(largest[k], 0.8 * bound_degrees) << "angle " << k;
}

// Displacement of voxel (x, y, z) in mm along axis a, for grids without flips or rotation.
double displacement_mm(const SamplingGrid& grid, const std::array<double, 3>& spacing, int x, int y, int z, int a) {
  const std::array<double, 3> p = position_of(grid, x, y, z);
  const double voxel[3] = {static_cast<double>(x), static_cast<double>(y), static_cast<double>(z)};
  return (p[static_cast<std::size_t>(a)] - voxel[a]) * spacing[static_cast<std::size_t>(a)];
}

TEST_P(AugmentationTest, DisplacementHasTheRequestedSdAtEveryVoxel) {
  // Each component is normal(0, deformation_mm) at every voxel (the option's documented meaning).
  // Over n independent grids the sample SD has standard error sd / sqrt(2 (n - 1)) and the mean
  // sd / sqrt(n) (normal sampling theory, common practice, no source); tolerance 4 SE each.
  const Case& c = GetParam();
  const Shape shape = c.shape;
  const int dims = shape.dims();
  const double sd_mm = 2.0;
  const int n = 1000;
  // Corners, the centre and voxels at odd places inside a lattice cell.
  const std::array<std::array<int, 3>, 5> voxels = {{{0, 0, 0},
                                                     {shape.x - 1, shape.y - 1, shape.z - 1},
                                                     {shape.x / 2, shape.y / 2, shape.z / 2},
                                                     {3, 5, shape.z > 1 ? 1 : 0},
                                                     {shape.x - 4, 2, shape.z > 1 ? shape.z - 3 : 0}}};
  std::vector<std::vector<double>> samples(voxels.size() * 3);
  for (int repeat = 0; repeat < n; ++repeat) {
    RandomStream random = stream(static_cast<std::uint64_t>(repeat));
    const SamplingGrid grid = random_grid(geometry_of(c), only(false, 0.0, sd_mm, 6.0), random);
    for (std::size_t k = 0; k < voxels.size(); ++k)
      for (int a = 0; a < dims; ++a)
        samples[k * 3 + static_cast<std::size_t>(a)].push_back(
            displacement_mm(grid, c.spacing_mm, voxels[k][0], voxels[k][1], voxels[k][2], a));
  }
  for (std::size_t k = 0; k < voxels.size(); ++k)
    for (int a = 0; a < dims; ++a) {
      const std::vector<double>& values = samples[k * 3 + static_cast<std::size_t>(a)];
      double sum = 0.0, squares = 0.0;
      for (double value : values) sum += value;
      const double mean = sum / n;
      for (double value : values) squares += (value - mean) * (value - mean);
      const double sd = std::sqrt(squares / (n - 1));
      EXPECT_NEAR(sd, sd_mm, 4.0 * sd_mm / std::sqrt(2.0 * (n - 1)))
          << "voxel " << k << ", axis " << a << ", seed " << kSeed << ", repeats 0-" << n - 1;
      EXPECT_NEAR(mean, 0.0, 4.0 * sd_mm / std::sqrt(n)) << "voxel " << k << ", axis " << a;
    }
}

// RMS over the image of the difference of each displacement component between neighbours, in mm,
// relative to deformation_mm.
double neighbour_difference_ratio(const Case& c, double sd_mm, double spacing_mm, int repeats) {
  const Shape shape = c.shape;
  const int dims = shape.dims();
  const int extent[3] = {shape.x, shape.y, shape.z};
  double squares = 0.0;
  double count = 0.0;
  for (int repeat = 0; repeat < repeats; ++repeat) {
    RandomStream random = stream(static_cast<std::uint64_t>(repeat));
    const SamplingGrid grid = random_grid(geometry_of(c), only(false, 0.0, sd_mm, spacing_mm), random);
    for (int z = 0; z < shape.z; ++z)
      for (int y = 0; y < shape.y; ++y)
        for (int x = 0; x < shape.x; ++x)
          for (int along = 0; along < dims; ++along) {
            const int next[3] = {x + (along == 0 ? 1 : 0), y + (along == 1 ? 1 : 0), z + (along == 2 ? 1 : 0)};
            if (next[along] >= extent[along]) continue;
            for (int a = 0; a < dims; ++a) {
              const double d = displacement_mm(grid, c.spacing_mm, next[0], next[1], next[2], a) -
                               displacement_mm(grid, c.spacing_mm, x, y, z, a);
              squares += d * d;
              count += 1.0;
            }
          }
  }
  return std::sqrt(squares / count) / sd_mm;
}

TEST_P(AugmentationTest, DisplacementIsSmoothOnTheScaleOfItsSpacing) {
  // With control points 48 mm apart, neighbouring voxels (at most 2.5 mm apart) move almost
  // together; with the 2 mm minimum spacing they do not. A smooth field's neighbour difference
  // scales with voxel / node spacing (common practice, no source); the bounds are this file's
  // own measurements on these shapes with margin (RMS difference / SD observed 0.026-0.042 at
  // 48 mm and 0.56-0.83 at 2 mm).
  const Case& c = GetParam();
  const double smooth = neighbour_difference_ratio(c, 3.0, 48.0, 20);
  const double rough = neighbour_difference_ratio(c, 3.0, 2.0, 20);
  EXPECT_LT(smooth, 0.1);
  EXPECT_GT(rough, 0.3);
  EXPECT_LT(smooth, 0.25 * rough);
}

TEST_P(AugmentationTest, SameStreamGivesTheSameGrid) {
  const Geometry geometry = geometry_of(GetParam());
  const AugmentationOptions options = only(true, 12.0, 1.5, 10.0);
  RandomStream first = stream(7), second = stream(7), other = stream(8);
  const SamplingGrid a = random_grid(geometry, options, first);
  const SamplingGrid b = random_grid(geometry, options, second);
  const SamplingGrid different = random_grid(geometry, options, other);
  EXPECT_EQ(a.shape, geometry.shape);
  EXPECT_EQ(a.positions, b.positions);
  EXPECT_NE(a.positions, different.positions);
  EXPECT_EQ(first.next_u64(), second.next_u64());
}

INSTANTIATE_TEST_SUITE_P(Shapes, AugmentationTest,
                         testing::Values(Case{"square2d", Shape{32, 32, 1}, {1.0, 1.0, 1.0}},
                                         Case{"anisotropic2d", Shape{40, 24, 1}, {0.8, 1.5, 1.0}},
                                         Case{"cube3d", Shape{16, 16, 16}, {1.0, 1.0, 1.0}},
                                         Case{"anisotropic3d", Shape{20, 16, 12}, {1.0, 1.2, 2.5}}),
                         [](const testing::TestParamInfo<Case>& param) { return std::string(param.param.name); });

// ---------------------------------------------------------------------------------------------
// Cases for the scipy.ndimage.map_coordinates check (tests/python/augmentation_reference_test.py):
// written to $FRUGAL_AUGMENTATION_REFERENCE_DIR when set (the Python check runs this test so),
// otherwise to the test's scratch folder. Per case: <name>_shape.txt ("x y z"), and raw
// little-endian float32 <name>_image.f32 (x fastest), <name>_positions.f32 (dims per voxel) and
// <name>_linear.f32 (warp_linear's result).

void write_floats(const std::string& path, const std::vector<float>& values) {
  std::ofstream out(path, std::ios::binary);
  for (float value : values) {
    std::uint32_t bits = 0;
    std::memcpy(&bits, &value, sizeof bits);
    const char bytes[4] = {static_cast<char>(bits & 0xFFU), static_cast<char>((bits >> 8U) & 0xFFU),
                           static_cast<char>((bits >> 16U) & 0xFFU), static_cast<char>((bits >> 24U) & 0xFFU)};
    out.write(bytes, 4);
  }
  ASSERT_TRUE(out.good()) << "could not write " << path;
}

TEST(AugmentationReference, WritesScipyCases) {
  const char* folder = std::getenv("FRUGAL_AUGMENTATION_REFERENCE_DIR");
  if (folder == nullptr) folder = std::getenv("TEST_TMPDIR");
  if (folder == nullptr) GTEST_SKIP() << "neither FRUGAL_AUGMENTATION_REFERENCE_DIR nor TEST_TMPDIR is set";
  const Case cases[] = {{"plane", Shape{23, 17, 1}, {1.0, 1.3, 1.0}}, {"volume", Shape{11, 9, 7}, {1.0, 1.0, 2.0}}};
  std::uint64_t repeat = 0;
  for (const Case& c : cases) {
    const Shape shape = c.shape;
    const auto dims = static_cast<std::size_t>(shape.dims());
    const std::vector<float> image = random_image(shape, 40 + repeat);
    // Realistic positions (every option on, large enough to leave the image near its borders) on
    // even voxels, uniform in [-3, n + 2] on odd ones, and exact edges and integers first.
    RandomStream random = stream(40 + repeat);
    SamplingGrid grid = random_grid(geometry_of(c), only(true, 30.0, 4.0, 6.0), random);
    const double extent[3] = {static_cast<double>(shape.x), static_cast<double>(shape.y), static_cast<double>(shape.z)};
    for (std::size_t v = 1; v < shape.voxel_count(); v += 2)
      for (std::size_t a = 0; a < dims; ++a)
        grid.positions[v * dims + a] = static_cast<float>(random.uniform(-3.0, extent[a] + 2.0));
    for (std::size_t a = 0; a < dims; ++a) {
      grid.positions[0 * dims + a] = 0.0F;
      grid.positions[1 * dims + a] = static_cast<float>(extent[a] - 1.0);
      grid.positions[2 * dims + a] = 2.0F;
      grid.positions[3 * dims + a] = -0.0F;
    }
    std::vector<float> result(shape.voxel_count());
    warp_linear(image.data(), result.data(), grid);
    const std::string prefix = std::string(folder) + "/" + c.name;
    std::ofstream(prefix + "_shape.txt") << shape.x << " " << shape.y << " " << shape.z << "\n";
    write_floats(prefix + "_image.f32", image);
    write_floats(prefix + "_positions.f32", grid.positions);
    write_floats(prefix + "_linear.f32", result);
    ++repeat;
  }
}

}  // namespace
}  // namespace frugal::learn
