#pragma once
// The small rigid pose change of a rescan: a rotation about the image centre and a shift.

#include <array>

#include "phantoms/random.h"
#include "phantoms/scenario.h"

namespace frugal {

struct RigidPose {
  std::array<double, 9> rotation{1, 0, 0, 0, 1, 0, 0, 0, 1};  // row-major
  std::array<double, 3> shift_mm{0.0, 0.0, 0.0};

  bool is_identity() const;
  // Subject space (rest pose, centred on the image) to world space of the rescan, and back.
  std::array<double, 3> apply(const std::array<double, 3>& point) const;
  std::array<double, 3> inverse(const std::array<double, 3>& point) const;
  std::array<double, 3> rotate(const std::array<double, 3>& direction) const;
};

// Rotation angle and shift uniform within the limits; in 2D only about the z axis and in-plane.
RigidPose draw_pose(const RescanOptions& limits, int dims, RandomStream& random);

}  // namespace frugal
