#pragma once
// Exact Euclidean distance transform in millimetres for 2D and 3D grids with anisotropic voxel
// spacing (separable lower envelope of parabolas, Felzenszwalb & Huttenlocher 2012). OpenCV's
// distanceTransform is 2D only and ignores spacing, so surface distances need this one.

#include <array>
#include <cstdint>
#include <vector>

#include "phantoms/image.h"

namespace frugal {

// For every voxel, the squared distance in mm^2 to the nearest voxel where `features` is
// nonzero; +infinity everywhere when there is no feature voxel. Uses shape and spacing_mm only.
std::vector<double> squared_distance_to_features_mm2(const Image<std::uint8_t>& features);
// The same on a bare voxel vector (x fastest) of the given shape and spacing.
std::vector<double> squared_distance_to_features_mm2(const std::vector<std::uint8_t>& features, const Shape& shape,
                                                     const std::array<double, 3>& spacing_mm);

}  // namespace frugal
