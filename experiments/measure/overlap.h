#pragma once
// Overlap and boundary distance between two binary masks of the same grid (2D or 3D):
// Dice (1945), Jaccard, Hausdorff distance and its 95th-percentile variant in millimetres.
//
// Conventions (stated because tools differ):
// - a voxel is foreground when nonzero;
// - distances are between *surface* voxels: foreground voxels with a face neighbour (4 in 2D,
//   6 in 3D) that is background or outside the grid; positions are index * spacing_mm;
// - Hausdorff = max of the two directed maxima; HD95 = max of the two directed 95th
//   percentiles (linear interpolation between order statistics);
// - two empty masks: Dice = Jaccard = 1 and distances 0; exactly one empty: Dice = Jaccard = 0
//   and distances +infinity.

#include <cstddef>
#include <cstdint>
#include <string>

#include "phantoms/image.h"

namespace frugal::measure {

struct OverlapOptions {
  double distance_percentile = 95.0;  // of the "robust" Hausdorff distance
  std::string validate() const;       // empty when valid
};

struct OverlapResult {
  std::size_t reference_voxels = 0;
  std::size_t test_voxels = 0;
  std::size_t intersection_voxels = 0;
  double dice = 0.0;
  double jaccard = 0.0;
  double hausdorff_mm = 0.0;
  double percentile_hausdorff_mm = 0.0;  // at options.distance_percentile
};

double dice(std::size_t intersection, std::size_t first_size, std::size_t second_size);
double jaccard(std::size_t intersection, std::size_t first_size, std::size_t second_size);

// Surface voxels as defined above (1 on the surface, 0 elsewhere), same geometry as `mask`.
Image<std::uint8_t> surface_voxels(const Image<std::uint8_t>& mask);

// Throws UserError when the two grids differ in shape or spacing.
OverlapResult overlap(const Image<std::uint8_t>& reference, const Image<std::uint8_t>& test,
                      const OverlapOptions& options = {});

}  // namespace frugal::measure
