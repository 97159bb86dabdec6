#include "phantoms/pose.h"

#include <cmath>

namespace frugal {

bool RigidPose::is_identity() const {
  const RigidPose identity;
  return rotation == identity.rotation && shift_mm == identity.shift_mm;
}

std::array<double, 3> RigidPose::rotate(const std::array<double, 3>& d) const {
  const auto& r = rotation;
  return {r[0] * d[0] + r[1] * d[1] + r[2] * d[2], r[3] * d[0] + r[4] * d[1] + r[5] * d[2],
          r[6] * d[0] + r[7] * d[1] + r[8] * d[2]};
}

std::array<double, 3> RigidPose::apply(const std::array<double, 3>& point) const {
  auto rotated = rotate(point);
  for (int i = 0; i < 3; ++i) rotated[static_cast<std::size_t>(i)] += shift_mm[static_cast<std::size_t>(i)];
  return rotated;
}

std::array<double, 3> RigidPose::inverse(const std::array<double, 3>& point) const {
  const std::array<double, 3> d{point[0] - shift_mm[0], point[1] - shift_mm[1], point[2] - shift_mm[2]};
  const auto& r = rotation;  // the inverse of a rotation is its transpose
  return {r[0] * d[0] + r[3] * d[1] + r[6] * d[2], r[1] * d[0] + r[4] * d[1] + r[7] * d[2],
          r[2] * d[0] + r[5] * d[1] + r[8] * d[2]};
}

RigidPose draw_pose(const RescanOptions& limits, int dims, RandomStream& random) {
  RigidPose pose;
  const double angle = random.uniform(-1.0, 1.0) * limits.max_rotation_deg * M_PI / 180.0;
  std::array<double, 3> axis{0.0, 0.0, 1.0};
  if (dims == 3) {
    // Isotropic random axis from a normalised Gaussian vector.
    double norm = 0.0;
    do {
      for (double& component : axis) component = random.normal();
      norm = std::sqrt(axis[0] * axis[0] + axis[1] * axis[1] + axis[2] * axis[2]);
    } while (norm < 1e-9);
    for (double& component : axis) component /= norm;
  }
  // Rodrigues' rotation formula.
  const double c = std::cos(angle), s = std::sin(angle), t = 1.0 - c;
  const double x = axis[0], y = axis[1], z = axis[2];
  pose.rotation = {t * x * x + c,     t * x * y - s * z, t * x * z + s * y,
                   t * x * y + s * z, t * y * y + c,     t * y * z - s * x,
                   t * x * z - s * y, t * y * z + s * x, t * z * z + c};
  for (int i = 0; i < dims; ++i)
    pose.shift_mm[static_cast<std::size_t>(i)] = random.uniform(-1.0, 1.0) * limits.max_shift_mm;
  return pose;
}

}  // namespace frugal
