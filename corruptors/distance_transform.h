#pragma once
// Exact Euclidean distance transform on a voxel grid with per-axis spacing, used by outlines to
// place a boundary between voxel centres and to move it by a bias in millimetres.

#include <array>
#include <cstdint>
#include <vector>

#include "phantoms/image.h"

namespace frugal {

// What squared_distance_mm2 returns where the grid holds no feature voxel at all.
constexpr double kNoFeatureDistance2 = 1e30;

// Squared distance in mm^2 from every voxel centre to the nearest centre with feature != 0
// (0 on feature voxels), x fastest as in Image. Exact, by separable lower envelopes of parabolas
// (Felzenszwalb & Huttenlocher, "Distance transforms of sampled functions", Theory of Computing
// 8, 2012); a shape with z == 1 is transformed in-plane only. Voxels of a grid without any
// feature get kNoFeatureDistance2.
std::vector<double> squared_distance_mm2(const std::vector<std::uint8_t>& feature, const Shape& shape,
                                         const std::array<double, 3>& spacing_mm);

}  // namespace frugal
