#include "experiments/measure/connected_components.h"

#include <gtest/gtest.h>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

Image<std::uint8_t> blank(int x, int y, int z = 1) {
  Geometry geometry;
  geometry.shape = {x, y, z};
  return Image<std::uint8_t>(geometry, 0);
}

// A 6x7 image (rows listed top to bottom) whose counts scipy.ndimage.label and
// cv2.connectedComponents give below.
Image<std::uint8_t> validation_image() {
  const int rows[6][7] = {{1, 1, 0, 0, 0, 0, 0}, {1, 1, 0, 0, 1, 0, 0}, {0, 0, 1, 0, 0, 1, 0},
                          {0, 0, 0, 0, 0, 0, 0}, {0, 1, 0, 1, 0, 1, 1}, {1, 0, 0, 0, 0, 1, 1}};
  Image<std::uint8_t> image = blank(7, 6);
  for (int y = 0; y < 6; ++y) {
    for (int x = 0; x < 7; ++x) image.at(x, y) = static_cast<std::uint8_t>(rows[y][x]);
  }
  return image;
}

TEST(ConnectedComponents, TwoDimensionalCounts) {
  // scipy.ndimage.label / cv2.connectedComponents: 5 components with 8-connectivity, 8 with 4 [C].
  ConnectivityOptions four;
  four.connectivity = 4;
  const ComponentLabels full = label_components(validation_image());
  EXPECT_EQ(full.count, 5);
  EXPECT_EQ(label_components(validation_image(), four).count, 8);
  // OpenCV 8-connected areas [5, 2, 2, 1, 4] [C]; labels follow memory order here too.
  EXPECT_EQ(full.sizes, (std::vector<std::size_t>{5, 2, 2, 1, 4}));
}

TEST(ConnectedComponents, ThreeDimensionalCounts) {
  // 5x5x5 with an edge-adjacent, a corner-adjacent and a
  // face-adjacent pair; scipy.ndimage.label with generate_binary_structure(3, c) gives 5 / 4 / 3
  // components for 6 / 18 / 26 connectivity [C]. numpy index (a, b, c) maps to x=c, y=b, z=a.
  Image<std::uint8_t> volume = blank(5, 5, 5);
  volume.at(0, 0, 0) = volume.at(1, 1, 0) = 1;
  volume.at(4, 4, 4) = volume.at(3, 3, 3) = 1;
  volume.at(0, 0, 4) = volume.at(1, 0, 4) = 1;
  for (const auto& [connectivity, expected] : std::vector<std::pair<int, int>>{{6, 5}, {18, 4}, {26, 3}}) {
    ConnectivityOptions options;
    options.connectivity = connectivity;
    EXPECT_EQ(label_components(volume, options).count, expected) << connectivity << "-connectivity";
  }
}

// Air on the border, a blob well inside (a lung) and a voxel joined to the air only diagonally:
// full connectivity clears that voxel with the air, 4-connectivity keeps it (hand-built; common
// practice, no source).
TEST(ConnectedComponents, ClearsComponentsTouchingTheBorder) {
  Image<std::uint8_t> mask = blank(7, 7);
  mask.at(0, 3) = mask.at(0, 4) = 1;  // on the border
  mask.at(3, 3) = mask.at(4, 3) = 1;  // inside
  mask.at(1, 2) = 1;                  // diagonal to (0, 3) only
  Image<std::uint8_t> full = mask;
  clear_border_components(full);
  std::size_t left = 0;
  for (std::uint8_t v : full.voxels()) left += v;
  EXPECT_EQ(left, 2U);
  EXPECT_EQ(full.at(3, 3), 1);
  EXPECT_EQ(full.at(1, 2), 0);
  ConnectivityOptions four;
  four.connectivity = 4;
  clear_border_components(mask, four);
  EXPECT_EQ(mask.at(1, 2), 1);
  EXPECT_EQ(mask.at(4, 3), 1);
  EXPECT_EQ(mask.at(0, 3), 0);
  // In 3D the first and last slices are border too.
  Image<std::uint8_t> volume = blank(5, 5, 5);
  volume.at(2, 2, 0) = volume.at(2, 2, 1) = 1;
  volume.at(2, 2, 3) = 1;
  clear_border_components(volume);
  EXPECT_EQ(volume.at(2, 2, 1), 0);
  EXPECT_EQ(volume.at(2, 2, 3), 1);
}

TEST(ConnectedComponents, RejectsConnectivityOfTheOtherDimension) {
  ConnectivityOptions options;
  options.connectivity = 26;
  EXPECT_THROW(label_components(validation_image(), options), UserError);
  options.connectivity = 8;
  EXPECT_THROW(label_components(blank(3, 3, 3), options), UserError);
}

}  // namespace
}  // namespace frugal::measure
