#pragma once
// The truth voxels of each drawn object, found in the subject's label image: partial masks seed on
// them and outlines start from them. Subjects carry one label code per object kind, not one id
// per object, but the renderer keeps every object one connected component apart from the others
// (phantoms/object_rendering.h), so an object's voxels are the component of its code at its centre.

#include <array>
#include <cstddef>
#include <vector>

#include "phantoms/subject.h"

namespace frugal {

struct ObjectRegion {
  int object = -1;                  // index into truth.objects; -1: a lesion component without a record (voids)
  std::vector<std::size_t> voxels;  // voxel indices (Image::index order), ascending
  std::array<int, 3> low{};         // inclusive bounding box in voxels
  std::array<int, 3> high{};
};

// Continuous voxel coordinates (x, y, z) of a world point: the inverse of Geometry::world_mm.
std::array<double, 3> voxel_coordinates(const Geometry& geometry, const std::array<double, 3>& world_mm);

// Voxels holding `code` connected to `start` (8-connected in 2D, 26 in 3D, as the renderer keeps
// objects); `start` must hold `code`.
ObjectRegion connected_region(const LabelImage& labels, std::size_t start, std::uint8_t code);

// With object records (streaks): one region per record whose label code (lesion, dot or line)
// has a voxel at the record's centre, or failing that within one voxel of it (the nearest); a
// record without any such voxel (another object took all of them) gets none. Without records
// (voids): one region per connected component of the lesion label, in order of first voxel.
std::vector<ObjectRegion> object_regions(const Subject& subject);

}  // namespace frugal
