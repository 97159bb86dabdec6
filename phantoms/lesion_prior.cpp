#include "phantoms/lesion_prior.h"

#include <algorithm>
#include <cmath>
#include <limits>

namespace frugal {

double VentriclePair::normalised_radius(const std::array<double, 3>& p, int side) const {
  const Ventricle& v = ventricles[side];
  double sum = 0.0;
  for (std::size_t axis = 0; axis < (flat ? 2U : 3U); ++axis) {
    const double u = (p[axis] - v.centre_mm[axis]) / v.semi_axes_mm[axis];
    sum += u * u;
  }
  return std::sqrt(sum);
}

double VentriclePair::wall_distance_mm(const std::array<double, 3>& p) const {
  double nearest = std::numeric_limits<double>::infinity();
  for (int side = 0; side < 2; ++side) {
    const Ventricle& v = ventricles[side];
    const double r = normalised_radius(p, side);
    if (r <= 1.0) return 0.0;
    double from_centre = 0.0;
    for (std::size_t axis = 0; axis < (flat ? 2U : 3U); ++axis)
      from_centre += (p[axis] - v.centre_mm[axis]) * (p[axis] - v.centre_mm[axis]);
    // The wall point on the ray is centre + (p - centre) / r.
    nearest = std::min(nearest, std::sqrt(from_centre) * (1.0 - 1.0 / r));
  }
  return nearest;
}

std::array<double, 3> VentriclePair::radial_direction(const std::array<double, 3>& p) const {
  std::array<double, 3> best{1.0, 0.0, 0.0};
  double best_distance = std::numeric_limits<double>::infinity();
  for (const Ventricle& v : ventricles) {
    std::array<double, 3> d{p[0] - v.centre_mm[0], p[1] - v.centre_mm[1], flat ? 0.0 : p[2] - v.centre_mm[2]};
    const double norm = std::sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
    if (norm >= best_distance) continue;
    best_distance = norm;
    if (norm > 1e-9) best = {d[0] / norm, d[1] / norm, d[2] / norm};
  }
  return best;
}

bool accept_periventricular(const VentriclePair& pair, const std::array<double, 3>& p, double decay_mm,
                            RandomStream& random) {
  const double u = random.uniform();
  if (pair.normalised_radius(p, 0) < kVentricleEdge || pair.normalised_radius(p, 1) < kVentricleEdge) return false;
  return u < std::exp(-pair.wall_distance_mm(p) / decay_mm);
}

}  // namespace frugal
