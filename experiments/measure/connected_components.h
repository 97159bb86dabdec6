#pragma once
// Connected components of a binary mask: OpenCV in 2D, a union-find labelling in 3D with true
// 3D neighbourhoods (6, 18 or 26), never slice by slice. Labels are 1..count in order of each
// component's first voxel in memory order (x fastest), so they are deterministic.

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "phantoms/image.h"

namespace frugal::measure {

struct ConnectivityOptions {
  // Neighbours that join voxels: 4 or 8 in 2D; 6, 18 or 26 in 3D; 0 means full (8 or 26).
  int connectivity = 0;
  std::string validate(int dims) const;  // empty when valid
  int resolved(int dims) const;          // the neighbour count actually used
};

struct ComponentLabels {
  Image<std::int32_t> labels;      // 0 background, 1..count components
  int count = 0;
  std::vector<std::size_t> sizes;  // voxels per component; sizes[0] is for label 1
};

ComponentLabels label_components(const Image<std::uint8_t>& mask, const ConnectivityOptions& options = {});

// Sets to 0 every component of `mask` that touches the grid's border (the first or last row or
// column, and in 3D the first or last slice): air around a body, say, as against the lungs.
void clear_border_components(Image<std::uint8_t>& mask, const ConnectivityOptions& options = {});

}  // namespace frugal::measure
