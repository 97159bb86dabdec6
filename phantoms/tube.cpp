#include "phantoms/tube.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "phantoms/image.h"

namespace frugal {

namespace {

using Vec = std::array<double, 3>;

double dot(const Vec& a, const Vec& b) { return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]; }
Vec sub(const Vec& a, const Vec& b) { return {a[0] - b[0], a[1] - b[1], a[2] - b[2]}; }
Vec add_scaled(const Vec& a, const Vec& b, double t) { return {a[0] + t * b[0], a[1] + t * b[1], a[2] + t * b[2]}; }
Vec unit(const Vec& v) {
  const double n = std::sqrt(dot(v, v));
  return {v[0] / n, v[1] / n, v[2] / n};
}

// A bend radius below this keeps the level function's gradient bounded near the surface (the
// radius changes with the angle about the bend centre, whose gradient grows as 1 / distance to
// that centre): at least twice the tube radius plus 2 mm on each side.
double largest_curvature(double max_radius_mm) { return 1.0 / (2.0 * max_radius_mm + 4.0); }

}  // namespace

Vec TubePiece::point(double arc_mm) const {
  if (curvature_per_mm <= 0.0) return add_scaled(start_mm, tangent, arc_mm);
  const double bend_radius = 1.0 / curvature_per_mm, angle = arc_mm * curvature_per_mm;
  return add_scaled(add_scaled(start_mm, tangent, bend_radius * std::sin(angle)), normal,
                    bend_radius * (1.0 - std::cos(angle)));
}

Vec TubePiece::tangent_at(double arc_mm) const {
  const double angle = arc_mm * curvature_per_mm;
  return add_scaled(Vec{std::cos(angle) * tangent[0], std::cos(angle) * tangent[1], std::cos(angle) * tangent[2]},
                    normal, std::sin(angle));
}

Vec TubePiece::normal_at(double arc_mm) const {
  const double angle = arc_mm * curvature_per_mm;
  return add_scaled(Vec{std::cos(angle) * normal[0], std::cos(angle) * normal[1], std::cos(angle) * normal[2]}, tangent,
                    -std::sin(angle));
}

double TubePiece::level(const Vec& p) const {
  const Vec d = sub(p, start_mm);
  const double x = dot(d, tangent), y = dot(d, normal);
  const double z2 = std::max(dot(d, d) - x * x - y * y, 0.0);  // squared offset out of the bending plane
  double radial = 0.0, arc = 0.0, beyond_end = 0.0;
  const double widest = std::max(start_radius_mm, end_radius_mm);
  if (curvature_per_mm <= 0.0) {
    radial = std::sqrt(y * y + z2);
    arc = x;
    beyond_end = x - length_mm;
  } else {
    // Coordinates about the bend centre, which lies at distance R along the normal.
    const double bend_radius = 1.0 / curvature_per_mm;
    const double u = x, v = bend_radius - y;
    const double in_plane = std::sqrt(u * u + v * v);
    radial = std::sqrt((in_plane - bend_radius) * (in_plane - bend_radius) + z2);
    // Clearly outside (beyond the widest disc or behind the start): the level is at least this,
    // and the cheaper bound gives every decision the exact value would (see the header).
    const double outside = std::max(radial - widest, -x);
    if (outside > 0.0) return outside;
    arc = bend_radius * std::atan2(u, v);
    // Signed distance beyond the end disc's plane, which contains the bend centre.
    const double end_angle = length_mm * curvature_per_mm;
    beyond_end = (x - bend_radius * std::sin(end_angle)) * std::cos(end_angle) +
                 (y - bend_radius * (1.0 - std::cos(end_angle))) * std::sin(end_angle);
  }
  const double t = std::clamp(arc / length_mm, 0.0, 1.0);
  const double radius = start_radius_mm + (end_radius_mm - start_radius_mm) * t;
  return std::max({radial - radius, -x, beyond_end});
}

double TubePiece::lipschitz() const {
  // Within half the bend radius of the centreline (which holds every point near the surface, see
  // largest_curvature) the arc length changes by at most 2 mm per mm.
  return 1.0 + 2.0 * std::abs(end_radius_mm - start_radius_mm) / length_mm;
}

double TubePiece::volume_mm3() const {
  const double a = start_radius_mm, b = end_radius_mm;
  return M_PI * length_mm * (a * a + a * b + b * b) / 3.0;
}

double TubePiece::area_mm2() const { return length_mm * (start_radius_mm + end_radius_mm); }

void TubePiece::bounds(Vec& low, Vec& high) const {
  constexpr int kSamples = 16;
  const double bend = length_mm * curvature_per_mm;
  // Between two samples the arc leaves their chord by at most its sagitta R (1 - cos(step / 2)).
  const double sagitta = curvature_per_mm > 0.0 ? (1.0 - std::cos(0.5 * bend / kSamples)) / curvature_per_mm : 0.0;
  const double reach = std::max(start_radius_mm, end_radius_mm) + sagitta;
  low = high = start_mm;
  for (int n = 0; n <= kSamples; ++n) {
    const Vec p = point(length_mm * n / kSamples);
    for (std::size_t axis = 0; axis < 3; ++axis) {
      low[axis] = std::min(low[axis], p[axis]);
      high[axis] = std::max(high[axis], p[axis]);
    }
  }
  for (std::size_t axis = 0; axis < 3; ++axis) {
    low[axis] -= reach;
    high[axis] += reach;
  }
}

TubePiece TubePiece::moved(const RigidPose& pose) const {
  TubePiece piece = *this;
  piece.start_mm = pose.apply(start_mm);
  piece.tangent = pose.rotate(tangent);
  piece.normal = pose.rotate(normal);
  return piece;
}

double Tube::length_mm() const {
  double total = 0.0;
  for (const TubePiece& piece : pieces) total += piece.length_mm;
  return total;
}

double Tube::volume_mm3() const {
  double total = 0.0;
  for (const TubePiece& piece : pieces) total += piece.volume_mm3();
  return total;
}

double Tube::area_mm2() const {
  double total = 0.0;
  for (const TubePiece& piece : pieces) total += piece.area_mm2();
  return total;
}

double Tube::max_radius_mm() const {
  double largest = 0.0;
  for (const TubePiece& piece : pieces) largest = std::max({largest, piece.start_radius_mm, piece.end_radius_mm});
  return largest;
}

Vec Tube::point(double arc_mm) const {
  FRUGAL_CHECK(!pieces.empty());
  for (const TubePiece& piece : pieces) {
    if (arc_mm <= piece.length_mm) return piece.point(std::max(arc_mm, 0.0));
    arc_mm -= piece.length_mm;
  }
  return pieces.back().end_mm();
}

double Tube::level(const Vec& p) const {
  double nearest = std::numeric_limits<double>::infinity();
  for (const TubePiece& piece : pieces) nearest = std::min(nearest, piece.level(p));
  return nearest;
}

double Tube::lipschitz() const {
  double largest = 1.0;
  for (const TubePiece& piece : pieces) largest = std::max(largest, piece.lipschitz());
  return largest;
}

void Tube::bounds(Vec& low, Vec& high) const {
  FRUGAL_CHECK(!pieces.empty());
  pieces.front().bounds(low, high);
  for (std::size_t n = 1; n < pieces.size(); ++n) {
    Vec piece_low{}, piece_high{};
    pieces[n].bounds(piece_low, piece_high);
    for (std::size_t axis = 0; axis < 3; ++axis) {
      low[axis] = std::min(low[axis], piece_low[axis]);
      high[axis] = std::max(high[axis], piece_high[axis]);
    }
  }
}

Tube Tube::moved(const RigidPose& pose) const {
  Tube tube;
  tube.pieces.reserve(pieces.size());
  for (const TubePiece& piece : pieces) tube.pieces.push_back(piece.moved(pose));
  return tube;
}

TubePiece start_tube(const Vec& start_mm, const Vec& tangent, double length_mm, double bend_rad,
                     const Vec& bend_direction, double start_radius_mm, double end_radius_mm) {
  TubePiece piece;
  piece.start_mm = start_mm;
  piece.tangent = unit(tangent);
  piece.length_mm = length_mm;
  piece.start_radius_mm = start_radius_mm;
  piece.end_radius_mm = end_radius_mm;
  Vec across = add_scaled(bend_direction, piece.tangent, -dot(bend_direction, piece.tangent));
  if (dot(across, across) < 1e-18) {
    // No usable bend direction: any perpendicular one.
    const Vec helper = std::abs(piece.tangent[0]) < 0.9 ? Vec{1.0, 0.0, 0.0} : Vec{0.0, 1.0, 0.0};
    across = add_scaled(helper, piece.tangent, -dot(helper, piece.tangent));
  }
  piece.normal = unit(across);
  if (bend_rad < 0.0) {
    bend_rad = -bend_rad;
    for (double& c : piece.normal) c = -c;
  }
  // At most a quarter turn per piece, so the end disc's plane bounds the piece on one side only.
  piece.curvature_per_mm = std::min(
      {bend_rad / length_mm, largest_curvature(std::max(start_radius_mm, end_radius_mm)), 0.5 * M_PI / length_mm});
  return piece;
}

TubePiece continue_tube(const TubePiece& previous, double length_mm, double bend_rad, const Vec& bend_direction,
                        double end_radius_mm) {
  return start_tube(previous.end_mm(), previous.tangent_at(previous.length_mm), length_mm, bend_rad, bend_direction,
                    previous.end_radius_mm, end_radius_mm);
}

}  // namespace frugal
