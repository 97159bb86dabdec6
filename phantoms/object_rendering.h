#pragma once
// Draws analytic objects into an image with partial-volume edges: each voxel receives
// contrast x (fraction of the voxel inside the object), found by supersampling only the voxels
// that the boundary can cross. A voxel is labelled with the object's id when its centre lies
// inside the object (an unbiased discrete volume); when that leaves a thin object in pieces or
// empty, the voxels its long axis crosses join, so every object is one connected component.

#include <array>
#include <cstdint>

#include "phantoms/image.h"
#include "phantoms/tube.h"

namespace frugal {

// Prolate spheroid: semi-axis `semi_long_mm` along `direction`, `semi_short_mm` across it.
// A sphere has equal semi-axes. 2D objects lie in the image plane.
struct Spheroid {
  std::array<double, 3> centre_mm{};
  std::array<double, 3> direction{1.0, 0.0, 0.0};  // unit
  double semi_long_mm = 1.0;
  double semi_short_mm = 1.0;
};

// All points within `radius_mm` of the segment centre +- half_length_mm * direction.
struct Capsule {
  std::array<double, 3> centre_mm{};
  std::array<double, 3> direction{1.0, 0.0, 0.0};
  double half_length_mm = 1.0;
  double radius_mm = 0.5;
};

struct RenderedObject {
  std::int64_t labelled_voxels = 0;  // voxels labelled with this object's id
  double covered_voxels = 0.0;       // summed coverage: the discrete volume in voxels
  int lowest_slice = -1, highest_slice = -1;  // z range of labelled voxels
};

// `allowed` (optional) marks where the object may appear (e.g. the field); other voxels are left
// alone. Voxels already labelled by another object keep their label.
RenderedObject render(const Spheroid& object, float contrast, std::uint16_t id, FloatImage& image,
                      InstanceImage& instances, const LabelImage* allowed = nullptr);
RenderedObject render(const Capsule& object, float contrast, std::uint16_t id, FloatImage& image,
                      InstanceImage& instances, const LabelImage* allowed = nullptr);
// A curved tapered tube (tube.h); a thin one that falls apart is joined along its centreline.
RenderedObject render(const Tube& object, float contrast, std::uint16_t id, FloatImage& image,
                      InstanceImage& instances, const LabelImage* allowed = nullptr);

// Shortest distance between the segments a0-a1 and b0-b1 (for keeping objects apart).
double segment_distance(const std::array<double, 3>& a0, const std::array<double, 3>& a1,
                        const std::array<double, 3>& b0, const std::array<double, 3>& b1);

}  // namespace frugal
