#pragma once
// The anatomical prior for lesion placement (streaks.placement): lesion density highest next to
// the ventricle walls and falling with distance from them (deep, periventricular tissue), and
// lesion directions along a radial field pointing outward from the ventricles, the way deep
// perforating vessels run.

#include <array>

#include "phantoms/random.h"

namespace frugal {

// An axis-aligned ellipsoid (ellipse in 2D) in mm.
struct Ventricle {
  std::array<double, 3> centre_mm{};
  std::array<double, 3> semi_axes_mm{1.0, 1.0, 1.0};
};

struct VentriclePair {
  Ventricle ventricles[2];
  bool flat = true;  // 2D: z is ignored

  // Normalised radius of p in ventricle `side` (1 on its wall).
  double normalised_radius(const std::array<double, 3>& p, int side) const;
  // Distance from the nearer ventricle wall in mm, measured along the ray from that ventricle's
  // centre through p (exact for a sphere, an upper bound for an elongated ventricle); 0 inside.
  double wall_distance_mm(const std::array<double, 3>& p) const;
  // Unit direction from the centre of the ventricle whose centre is nearer to p (x, y in 2D).
  std::array<double, 3> radial_direction(const std::array<double, 3>& p) const;
};

// Lesion centres do not sit in the CSF: a point within this normalised radius of a ventricle
// (its wall, 1, plus the blurred edge the tissue model draws, up to 1.2) is refused.
constexpr double kVentricleEdge = 1.2;

// Accepts a candidate centre with probability exp(-wall distance / decay_mm), refusing points in a
// ventricle; one uniform number per call.
bool accept_periventricular(const VentriclePair& pair, const std::array<double, 3>& p, double decay_mm,
                            RandomStream& random);

}  // namespace frugal
