#pragma once
// Whole-image operations the phantom generators share: smooth-field upsampling, Gaussian
// filtering in millimetres, rigid resampling, and voxel/world coordinates.

#include <array>
#include <vector>

#include "phantoms/image.h"
#include "phantoms/pose.h"

namespace frugal {

// Geometry of an image centred on the world origin, identity orientation.
Geometry centred_geometry(const Shape& shape, const std::array<double, 3>& spacing_mm);

// Control values on a coarse grid whose node (i, j, k) sits on voxel (i, j, k) * step; returns the
// full-resolution image by separable linear interpolation. Grid extent: coarse_extent().
struct CoarseGrid {
  Shape shape;
  int step = 1;
  std::vector<float> values;  // x fastest
};
Shape coarse_extent(const Shape& fine, int step);
FloatImage upsample(const CoarseGrid& grid, const Geometry& geometry);

// Gaussian filter with standard deviation given in mm per axis (0 leaves an axis alone); borders
// reflect, so the mean is kept. 2D images ignore the z entry.
void gaussian_filter(FloatImage& image, const std::array<double, 3>& sigma_mm);
// Sum of squared weights of the discrete kernel gaussian_filter uses: the variance factor of
// white noise passed through it.
double gaussian_filter_noise_gain(const FloatImage& image, const std::array<double, 3>& sigma_mm);

// Resamples `rest` (the subject at rest, world = subject space) into the rescan pose:
// output(world) = rest(pose.inverse(world)). Linear for intensities, nearest for labels.
FloatImage resample_linear(const FloatImage& rest, const RigidPose& pose, float outside_value);
template <class Label>
Image<Label> resample_nearest(const Image<Label>& rest, const RigidPose& pose);

}  // namespace frugal
