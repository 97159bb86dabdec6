#pragma once
// The vessel and airway tree of the voids family (voids.tree): from the hilum of each lung, trunks
// fan out and branch in two at each generation, each branch a gently curved tapered tube
// (tube.h). Vessels are solid soft tissue, bright on CT; airways have a soft-tissue wall around an
// air-filled lumen, dark like low-density disease. Both are lung, never disease: the truth's
// low-density region leaves them out, while densitometry, measured on the image, counts the dark
// lumen and misses the bright vessels, as it does in real scans.

#include <array>
#include <cstdint>
#include <vector>

#include "phantoms/image.h"
#include "phantoms/pose.h"
#include "phantoms/random.h"
#include "phantoms/scenario.h"
#include "phantoms/tube.h"

namespace frugal {

struct LungOutline {
  std::array<double, 3> centre_mm{};
  std::array<double, 3> semi_axes_mm{1.0, 1.0, 1.0};
};

struct LungTree {
  std::vector<TubePiece> vessels;        // solid, soft tissue
  std::vector<TubePiece> airway_walls;   // outer surface of the airways
  std::vector<TubePiece> airway_lumens;  // the same centrelines with the wall taken off: air
  LungTree moved(const RigidPose& pose) const;
};

// Grows the tree in both lungs (lung 0 on the -x side); `flat` keeps it in the image plane. An
// empty tree when options.generations is 0.
LungTree grow_lung_tree(const TreeOptions& options, const LungOutline lungs[2], bool flat, RandomStream& random);

enum TreeCode : std::uint8_t { kNoTree = 0, kTreeTissue = 1, kTreeLumen = 2 };

// The tree on an image grid, inside `field` only. Coverage is exact for the union of branches
// (a voxel shared by two branches is not counted twice), supersampled 4x4 (2D) or 3x3x3 (3D) near
// the surface as object_rendering does; `where` uses the voxel-centre rule.
struct TreeRaster {
  FloatImage tissue;  // share of the voxel inside a vessel or an airway (wall and lumen)
  FloatImage air;     // share inside an airway lumen (never above `tissue`)
  LabelImage where;   // TreeCode of the voxel centre
};
TreeRaster rasterise_tree(const LungTree& tree, const Geometry& geometry, const LabelImage& field);

}  // namespace frugal
