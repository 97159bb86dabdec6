#pragma once
// Geometric augmentation of training images, torch-free so that it runs on the batch-preparing
// thread: random flips, small rotations and smooth deformations, combined into one sampling grid
// per image and applied with linear (images) or nearest-neighbour (masks) interpolation. The
// consistency add-on uses the same grids to move a prediction into a deformed image's frame.

#include <string>
#include <vector>

#include "phantoms/image.h"
#include "phantoms/random.h"

namespace frugal::learn {

struct AugmentationOptions {
  bool flips = true;                     // mirror along each axis with probability 1/2
  double rotation_degrees = 0.0;         // uniform in [-r, r]; 2D about the centre, 3D about each axis in turn
  double deformation_mm = 0.0;           // standard deviation of each displacement component, in mm
  double deformation_spacing_mm = 16.0;  // control-point spacing of the displacement: larger is smoother
  bool geometric() const { return rotation_degrees > 0.0 || deformation_mm > 0.0; }
  // Empty, or "<key> = <value>: <what is allowed>".
  std::string validate() const;
};

// For each output voxel (x fastest, then y, then z), the input position it samples, in input
// voxel coordinates: x, y (and z for 3D) consecutive, dims() floats per voxel.
struct SamplingGrid {
  Shape shape;
  std::vector<float> positions;
};

// The grid that samples every voxel at itself.
SamplingGrid identity_grid(const Shape& shape);

// A random grid: flips, then a rotation about the image centre, then a smooth displacement
// (random vectors on control points `deformation_spacing_mm` apart, interpolated smoothly), all
// in mm so that anisotropic voxels are handled. Draws from `random` in a fixed order, so the
// same stream gives the same grid.
SamplingGrid random_grid(const Geometry& geometry, const AugmentationOptions& options, RandomStream& random);

// destination[v] = source sampled at grid position v. Positions outside the image take the
// nearest edge value (clamped coordinates). `source` and `destination` hold grid.shape voxels.
void warp_linear(const float* source, float* destination, const SamplingGrid& grid);
void warp_nearest(const float* source, float* destination, const SamplingGrid& grid);

// Flips only, without interpolation (the fast path when no rotation or deformation is asked):
// destination is source mirrored along axis a when flip[a].
void copy_flipped(const float* source, float* destination, const Shape& shape, const bool flip[3]);
// The flips random_grid would draw first, drawn the same way (one uniform per axis < 1/2).
void draw_flips(const Shape& shape, RandomStream& random, bool flip[3]);

}  // namespace frugal::learn
