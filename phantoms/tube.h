#pragma once
// A smooth curved tube with tapering width: a chain of pieces, each a circular arc (or a straight
// segment) carrying a disc whose radius changes linearly with arc length, cut square at both
// ends. Consecutive pieces share the end disc and the tangent there, so the chain is one tube
// with a continuous centreline direction. Vessel-like look-alikes (streaks) and the vessel and
// airway tree of the voids family are made of such pieces.

#include <array>
#include <vector>

#include "phantoms/pose.h"

namespace frugal {

struct TubePiece {
  std::array<double, 3> start_mm{};              // centre of the start disc
  std::array<double, 3> tangent{1.0, 0.0, 0.0};  // unit centreline direction at the start
  std::array<double, 3> normal{0.0, 1.0, 0.0};   // unit, perpendicular to tangent: towards the bend
  double length_mm = 1.0;                        // arc length of the centreline
  double curvature_per_mm = 0.0;                 // 1 / bend radius; 0 = straight
  double start_radius_mm = 0.5;
  double end_radius_mm = 0.5;

  std::array<double, 3> point(double arc_mm) const;  // centreline point at arc length arc_mm
  std::array<double, 3> tangent_at(double arc_mm) const;
  std::array<double, 3> normal_at(double arc_mm) const;
  std::array<double, 3> end_mm() const { return point(length_mm); }
  // Level function: <= 0 inside. Near the surface it changes by at most lipschitz() per mm.
  // Exact within the widest radius of the bent centreline in front of the start disc; elsewhere it
  // may return a smaller positive value (a lower bound), which keeps its sign and every margin test.
  double level(const std::array<double, 3>& p) const;
  double lipschitz() const;
  // Exact volume of the piece: integral of pi r(s)^2 ds, which for a disc swept along a circular
  // arc of bend radius larger than the disc equals the straight frustum's pi L (r0^2 + r0 r1 +
  // r1^2) / 3 (Pappus's centroid theorem: the disc's centroid lies on the arc).
  double volume_mm3() const;
  // Exact area in the bending plane (2D subjects): integral of 2 r(s) ds = L (r0 + r1).
  double area_mm2() const;
  // Axis-aligned box holding the piece: low and high corners in mm.
  void bounds(std::array<double, 3>& low, std::array<double, 3>& high) const;
  TubePiece moved(const RigidPose& pose) const;
};

// A whole tube: the pieces in order along the centreline.
struct Tube {
  std::vector<TubePiece> pieces;

  double length_mm() const;   // total arc length
  double volume_mm3() const;  // sum of the pieces' exact volumes
  double area_mm2() const;    // sum of the pieces' exact in-plane areas
  double max_radius_mm() const;
  std::array<double, 3> point(double arc_mm) const;  // along the whole chain, clamped to its ends
  double level(const std::array<double, 3>& p) const;
  double lipschitz() const;
  void bounds(std::array<double, 3>& low, std::array<double, 3>& high) const;
  Tube moved(const RigidPose& pose) const;
};

// A piece from `start_mm` along `tangent` (need not be unit) that turns by `bend_rad` over
// `length_mm` towards `bend_direction` (made perpendicular to the tangent; a negative bend turns
// away from it). The bend is capped at a quarter turn and at a bend radius of twice the tube
// radius plus 4 mm, which keeps level() well behaved.
TubePiece start_tube(const std::array<double, 3>& start_mm, const std::array<double, 3>& tangent, double length_mm,
                     double bend_rad, const std::array<double, 3>& bend_direction, double start_radius_mm,
                     double end_radius_mm);
// The next piece of a chain: it starts at `previous`'s end disc with its tangent and radius, and
// bends as start_tube does.
TubePiece continue_tube(const TubePiece& previous, double length_mm, double bend_rad,
                        const std::array<double, 3>& bend_direction, double end_radius_mm);

}  // namespace frugal
