#include "phantoms/streaks.h"

#include <algorithm>
#include <cmath>

#include "phantoms/image_ops.h"
#include "phantoms/lesion_prior.h"
#include "phantoms/object_rendering.h"
#include "phantoms/tube.h"

namespace frugal {

namespace {

using Vec = std::array<double, 3>;

double smoothstep(double edge0, double edge1, double x) {
  const double t = std::clamp((x - edge0) / (edge1 - edge0), 0.0, 1.0);
  return t * t * (3.0 - 2.0 * t);
}

// The head: an ellipsoid (an ellipse in 2D) centred on the image.
// An axis-aligned ellipsoid (an ellipse in 2D, where z is ignored).
struct Ellipsoid {
  Vec centre{};
  Vec inverse_semi_axes{};
  bool flat = true;
  Ellipsoid(const Vec& centre_mm, const Vec& semi_axes_mm, bool is_flat)
      : centre(centre_mm),
        inverse_semi_axes{1.0 / semi_axes_mm[0], 1.0 / semi_axes_mm[1], 1.0 / semi_axes_mm[2]},
        flat(is_flat) {}
  // Squared normalised radius: 1 on the boundary.
  double radius_squared(const Vec& p) const {
    const double x = (p[0] - centre[0]) * inverse_semi_axes[0], y = (p[1] - centre[1]) * inverse_semi_axes[1];
    const double z = flat ? 0.0 : (p[2] - centre[2]) * inverse_semi_axes[2];
    return x * x + y * y + z * z;
  }
  double radius(const Vec& p) const { return std::sqrt(radius_squared(p)); }
};

// The head: an ellipsoid centred on the image, with two ventricles near its centre.
struct Head : Ellipsoid {
  Vec semi_axes;
  Ellipsoid ventricles[2];
  Head(const Vec& semi_axes_mm, bool is_flat)
      : Ellipsoid({0.0, 0.0, 0.0}, semi_axes_mm, is_flat),
        semi_axes(semi_axes_mm),
        ventricles{ventricle(-1.0, semi_axes_mm, is_flat), ventricle(1.0, semi_axes_mm, is_flat)} {}
  static Ellipsoid ventricle(double side, const Vec& head, bool is_flat) {
    return Ellipsoid({side * 0.12 * head[0], -0.05 * head[1], 0.0}, {0.07 * head[0], 0.22 * head[1], 0.15 * head[2]},
                     is_flat);
  }
};

CoarseGrid random_grid(const Shape& fine, int step, RandomStream& random) {
  CoarseGrid grid;
  grid.step = std::max(1, step);
  grid.shape = coarse_extent(fine, grid.step);
  grid.values.resize(grid.shape.voxel_count());
  for (float& value : grid.values) value = static_cast<float>(random.uniform(-1.0, 1.0));
  return grid;
}

// Tissue intensity at normalised radius r (perturbed), with two ventricles near the centre.
double tissue(const StreaksOptions& s, const Head& head, double head_radius, const Vec& p, double wobble) {
  const double r = head_radius + 0.05 * wobble;
  double value = s.white_matter + (s.grey_matter - s.white_matter) * smoothstep(0.70, 0.76, r);
  value += (s.csf - s.grey_matter) * smoothstep(0.88, 0.93, r);
  for (const Ellipsoid& ventricle : head.ventricles) {
    const double q = ventricle.radius_squared(p);
    if (q < 1.44) value += (s.csf - value) * (1.0 - smoothstep(0.8, 1.2, std::sqrt(q)));  // 1.44 = 1.2^2
  }
  return value;
}

Vec random_direction(const OrientationOptions& o, bool flat, RandomStream& random) {
  if (flat) {
    double angle = 0.0;
    if (o.isotropic) {
      angle = random.uniform(0.0, M_PI);
    } else {
      angle = std::atan2(o.axis[1], o.axis[0]) + random.normal() * o.spread_deg * M_PI / 180.0;
    }
    return {std::cos(angle), std::sin(angle), 0.0};
  }
  Vec d{};
  if (o.isotropic) {
    double norm = 0.0;
    do {
      for (double& c : d) c = random.normal();
      norm = std::sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
    } while (norm < 1e-9);
    for (double& c : d) c /= norm;
    return d;
  }
  // Tilt the preferred axis by a normal angle towards a random perpendicular direction.
  Vec axis = o.axis;
  const double n = std::sqrt(axis[0] * axis[0] + axis[1] * axis[1] + axis[2] * axis[2]);
  for (double& c : axis) c /= n;
  Vec helper = std::abs(axis[0]) < 0.9 ? Vec{1, 0, 0} : Vec{0, 1, 0};
  Vec e1{axis[1] * helper[2] - axis[2] * helper[1], axis[2] * helper[0] - axis[0] * helper[2],
         axis[0] * helper[1] - axis[1] * helper[0]};
  const double n1 = std::sqrt(e1[0] * e1[0] + e1[1] * e1[1] + e1[2] * e1[2]);
  for (double& c : e1) c /= n1;
  const Vec e2{axis[1] * e1[2] - axis[2] * e1[1], axis[2] * e1[0] - axis[0] * e1[2], axis[0] * e1[1] - axis[1] * e1[0]};
  const double phi = random.uniform(0.0, 2.0 * M_PI);
  const double tilt = random.normal() * o.spread_deg * M_PI / 180.0;
  for (std::size_t i = 0; i < 3; ++i)
    d[i] = std::cos(tilt) * axis[i] + std::sin(tilt) * (std::cos(phi) * e1[i] + std::sin(phi) * e2[i]);
  return d;
}

// Objects are kept apart through their bounding capsules (segment +- semi_long, radius semi_short).
struct PlacedCapsule {
  Vec a, b;
  double radius;
};

class Placer {
 public:
  Placer(const Head& head, double separation_mm) : head_(head), separation_mm_(separation_mm) {}

  // With a physical anatomy the image may crop the head: objects must then also lie inside the
  // box of voxel centres [low, high] (z is ignored in 2D).
  void keep_inside_image(const Vec& low, const Vec& high) {
    in_image_ = true;
    image_low_ = low;
    image_high_ = high;
  }

  // A uniform point inside the head shrunk to `max_radius` (normalised).
  Vec point_in_head(double max_radius, RandomStream& random) const {
    while (true) {
      Vec p{};
      for (std::size_t axis = 0; axis < 3; ++axis)
        p[axis] = (axis == 2 && head_.flat) ? 0.0 : random.uniform(-1.0, 1.0) * head_.semi_axes[axis] * max_radius;
      if (head_.radius(p) <= max_radius) return p;
    }
  }

  bool fits(const Vec& centre, const Vec& direction, double half_length, double radius, double max_radius) {
    const Vec a{centre[0] - half_length * direction[0], centre[1] - half_length * direction[1],
                centre[2] - half_length * direction[2]};
    const Vec b{centre[0] + half_length * direction[0], centre[1] + half_length * direction[1],
                centre[2] + half_length * direction[2]};
    if (head_.radius(a) > max_radius || head_.radius(b) > max_radius) return false;
    if (in_image_ && (!inside_image(a, radius) || !inside_image(b, radius))) return false;
    for (const PlacedCapsule& other : placed_)
      if (segment_distance(a, b, other.a, other.b) < radius + other.radius + separation_mm_) return false;
    placed_.push_back({a, b, radius});
    return true;
  }

  // A tube: its centreline, sampled about every mm, stays within max_radius; it is kept apart
  // through one capsule per piece (the chord, widened by the arc's sagitta).
  bool fits(const Tube& tube, double max_radius) {
    const double length = tube.length_mm(), radius = tube.max_radius_mm();
    const int samples = std::max(2, static_cast<int>(std::ceil(length)));
    for (int n = 0; n <= samples; ++n) {
      const Vec p = tube.point(length * n / samples);
      if (head_.radius(p) > max_radius || (in_image_ && !inside_image(p, radius))) return false;
    }
    std::vector<PlacedCapsule> mine;
    for (const TubePiece& piece : tube.pieces) {
      const double bend = piece.length_mm * piece.curvature_per_mm;
      const double sagitta = piece.curvature_per_mm > 0.0 ? (1.0 - std::cos(0.5 * bend)) / piece.curvature_per_mm : 0.0;
      mine.push_back({piece.start_mm, piece.end_mm(), radius + sagitta});
    }
    for (const PlacedCapsule& own : mine)
      for (const PlacedCapsule& other : placed_)
        if (segment_distance(own.a, own.b, other.a, other.b) < own.radius + other.radius + separation_mm_) return false;
    placed_.insert(placed_.end(), mine.begin(), mine.end());
    return true;
  }

 private:
  bool inside_image(const Vec& p, double radius) const {
    for (std::size_t axis = 0; axis < (head_.flat ? 2U : 3U); ++axis)
      if (p[axis] - radius < image_low_[axis] || p[axis] + radius > image_high_[axis]) return false;
    return true;
  }

  const Head& head_;
  double separation_mm_;
  std::vector<PlacedCapsule> placed_;
  bool in_image_ = false;
  Vec image_low_{}, image_high_{};
};

// Draws a centre from the periventricular prior: uniform candidates in the lesion region, each
// kept with probability exp(-distance / decay). The bound on tries is never reached in practice
// (the acceptance rate is above 1e-3 for every allowed decay); if it were, the last candidate is used.
Vec periventricular_centre(const Placer& placer, const VentriclePair& ventricles, double decay_mm, double max_radius,
                           RandomStream& random) {
  Vec centre{};
  for (int attempt = 0; attempt < 100000; ++attempt) {
    centre = placer.point_in_head(max_radius, random);
    if (accept_periventricular(ventricles, centre, decay_mm, random)) break;
  }
  return centre;
}

// A vessel-like look-alike as a smooth tube of three arcs of equal length; the width tapers
// linearly from `width` to `width x taper`. The shape is drawn here, its place by the caller.
Tube tube_shape(const StreaksOptions& s, double length, double width, const Vec& direction, bool flat,
                RandomStream& random) {
  constexpr int kPieces = 3;
  const double piece_length = length / kPieces, bend_limit = s.line_bend_deg * M_PI / 180.0;
  const auto radius_at = [&](int piece) { return 0.5 * width * (1.0 + (s.line_taper - 1.0) * piece / kPieces); };
  const OrientationOptions any_direction;
  Tube tube;
  for (int n = 0; n < kPieces; ++n) {
    const double bend = random.uniform(-bend_limit, bend_limit);
    const Vec tangent = n == 0 ? direction : tube.pieces.back().tangent_at(tube.pieces.back().length_mm);
    // 2D tubes bend in the image plane; 3D ones towards a random direction.
    const Vec towards = flat ? Vec{-tangent[1], tangent[0], 0.0} : random_direction(any_direction, false, random);
    if (n == 0)
      tube.pieces.push_back(start_tube({0.0, 0.0, 0.0}, tangent, piece_length, bend, towards, radius_at(0), radius_at(1)));
    else
      tube.pieces.push_back(continue_tube(tube.pieces.back(), piece_length, bend, towards, radius_at(n + 1)));
  }
  return tube;
}

// The same tube with the midpoint of its centreline at `centre`.
Tube centred_at(const Tube& shape, const Vec& centre) {
  const Vec middle = shape.point(0.5 * shape.length_mm());
  RigidPose shift;
  for (std::size_t axis = 0; axis < 3; ++axis) shift.shift_mm[axis] = centre[axis] - middle[axis];
  return shape.moved(shift);
}

constexpr int kPlacementTries = 200;
constexpr double kLesionRegion = 0.82;  // lesions stay inside the white/grey matter
constexpr double kLineRegion = 0.95;

}  // namespace

RestSubject draw_streaks_at_rest(const ScenarioOptions& scenario, std::uint64_t seed, int subject_index,
                                 Confounder& confounder) {
  const StreaksOptions& s = scenario.streaks;
  const auto subject = static_cast<std::uint64_t>(subject_index);
  RandomStream anatomy(seed, subject, StreamPurpose::anatomy);
  RandomStream lesions(seed, subject, StreamPurpose::lesions);
  RandomStream distractors(seed, subject, StreamPurpose::distractors);
  RandomStream nuisance(seed, subject, StreamPurpose::confounder);

  const bool flat = scenario.geometry.dims == 2;
  const Shape shape = flat ? Shape{scenario.geometry.size_2d[0], scenario.geometry.size_2d[1], 1}
                           : Shape{scenario.geometry.size_3d[0], scenario.geometry.size_3d[1], scenario.geometry.size_3d[2]};
  const Geometry geometry = centred_geometry(shape, scenario.geometry.spacing_mm);

  // The target quantity is drawn first so that a confounder can be tied to it.
  const int drawn_count = s.count.sample(lesions);
  confounder = draw_confounder(scenario.confounder, Family::streaks, drawn_count, s.count.expected(), s.count.spread(),
                               nuisance);
  const int extents[3] = {shape.x, shape.y, shape.z};
  const double fill[3] = {0.34, 0.37, 0.34};  // x kMaxSizeFactor stays inside the image
  Vec semi_axes{};
  const bool physical = scenario.geometry.anatomy_scale == AnatomyScale::physical;
  for (std::size_t axis = 0; axis < 3; ++axis) {
    if (physical)
      semi_axes[axis] = 0.5 * scenario.geometry.anatomy_size_mm[axis] * anatomy.uniform(0.9, 1.0) * confounder.size_factor;
    else
      semi_axes[axis] = fill[axis] * extents[axis] * geometry.spacing_mm[axis] * anatomy.uniform(0.9, 1.0) * confounder.size_factor;
  }
  const Head head(semi_axes, flat);

  // Tissue and bias on a coarse node grid (every second voxel), then upsampled. A physical
  // anatomy keeps the nodes about 2 mm apart and the wobble's control points about 8 mm apart,
  // as the default does at 1 mm voxels, so the tissue looks the same at any spacing.
  const int node_step = physical ? std::max(1, static_cast<int>(std::lround(2.0 / geometry.spacing_mm[0]))) : 2;
  const int wobble_step = physical ? std::max(1, static_cast<int>(std::lround(8.0 / (node_step * geometry.spacing_mm[0])))) : 4;
  const Shape nodes = coarse_extent(shape, node_step);
  const Geometry node_geometry = [&] {
    Geometry g;
    g.shape = nodes;
    return g;
  }();
  const FloatImage wobble = upsample(random_grid(nodes, wobble_step, anatomy), node_geometry);
  const int bias_step = static_cast<int>(std::lround(scenario.bias_field.scale_mm / (node_step * geometry.spacing_mm[0])));
  FloatImage bias = upsample(random_grid(nodes, bias_step, anatomy), node_geometry);
  for (float& value : bias.voxels()) value = static_cast<float>(1.0 + scenario.bias_field.amplitude * value);

  CoarseGrid background{nodes, node_step, std::vector<float>(nodes.voxel_count())};
  for (int k = 0; k < nodes.z; ++k)
    for (int j = 0; j < nodes.y; ++j)
      for (int i = 0; i < nodes.x; ++i) {
        const Vec p = geometry.world_mm(i * node_step, j * node_step, k * node_step);
        const double head_radius = head.radius(p);
        const std::size_t n = bias.index(i, j, k);
        if (head_radius > 1.1) continue;  // air outside the head; the grid starts at zero
        const double inside = 1.0 - smoothstep(0.985, 1.015, head_radius);
        background.values[n] =
            static_cast<float>(inside * tissue(s, head, head_radius, p, wobble.data()[n]) * bias.data()[n]);
      }

  RestSubject rest;
  rest.signal = upsample(background, geometry);
  rest.field = LabelImage(geometry, 0);
  rest.instances = InstanceImage(geometry, 0);
  for (int k = 0; k < shape.z; ++k)
    for (int j = 0; j < shape.y; ++j)
      for (int i = 0; i < shape.x; ++i)
        rest.field.at(i, j, k) = head.radius_squared(geometry.world_mm(i, j, k)) <= 1.0 ? 1 : 0;

  const auto bias_at = [&](const Vec& p) {
    const auto index = [&](std::size_t axis, int limit) {
      const double v = (p[axis] - geometry.origin_mm[axis]) / (geometry.spacing_mm[axis] * node_step);
      return std::clamp(static_cast<int>(std::lround(v)), 0, limit - 1);
    };
    return bias.at(index(0, nodes.x), index(1, nodes.y), flat ? 0 : index(2, nodes.z));
  };

  SubjectTruth& truth = rest.truth;
  truth.family = Family::streaks;
  truth.confounder = confounder.value;
  truth.target = drawn_count;
  Placer placer(head, s.min_separation_mm);
  if (physical) placer.keep_inside_image(geometry.world_mm(0, 0, 0), geometry.world_mm(shape.x - 1, shape.y - 1, shape.z - 1));
  VentriclePair ventricles;
  ventricles.flat = flat;
  for (int side = 0; side < 2; ++side) {
    ventricles.ventricles[side].centre_mm = head.ventricles[side].centre;
    for (std::size_t axis = 0; axis < 3; ++axis)
      ventricles.ventricles[side].semi_axes_mm[axis] = 1.0 / head.ventricles[side].inverse_semi_axes[axis];
  }
  const double slice_mm = geometry.spacing_mm[2];
  const auto add_object = [&](ObjectKind kind, const Vec& centre, const Vec& direction, double length, double width,
                              double contrast, const Tube* tube = nullptr) {
    ObjectRecord record;
    record.id = static_cast<int>(truth.objects.size()) + 1;
    record.kind = kind;
    record.centre_mm = centre;
    record.direction = direction;
    record.length_mm = length;
    record.width_mm = width;
    record.contrast = contrast;
    const double a = 0.5 * length, b = 0.5 * width;
    ObjectShape drawn;
    drawn.shown_contrast = static_cast<float>(contrast * bias_at(centre));
    if (tube != nullptr) {
      // A curved tube: truth records the midpoint of its centreline, the unit chord from end to
      // end, the centreline length, the widest (start) width and the exact volume.
      record.volume_mm3 = flat ? tube->area_mm2() * slice_mm : tube->volume_mm3();
      drawn.is_tube = true;
      drawn.tube = *tube;
      drawn.clip_to_field = true;
    } else if (kind == ObjectKind::line_distractor) {
      const double half = std::max(0.0, a - b);
      record.volume_mm3 = flat ? (2.0 * half * width + M_PI * b * b) * slice_mm
                               : M_PI * b * b * 2.0 * half + 4.0 / 3.0 * M_PI * b * b * b;
      drawn.is_capsule = true;
      drawn.capsule = Capsule{centre, direction, half, b};
      drawn.clip_to_field = true;  // long lines may reach the edge of the head
    } else {
      record.volume_mm3 = flat ? M_PI * a * b * slice_mm : 4.0 / 3.0 * M_PI * a * b * b;
      drawn.spheroid = Spheroid{centre, direction, a, b};
    }
    truth.objects.push_back(record);
    rest.shapes.push_back(drawn);
  };

  // Lesions, optionally with a share of them in one cluster region.
  const Vec cluster_centre = placer.point_in_head(0.6, lesions);
  for (int n = 0; n < drawn_count; ++n) {
    const double length = s.length_mm.sample(lesions);
    const double width = std::min(s.width_mm.sample(lesions), length);
    const double contrast = s.contrast.sample(lesions);
    const bool radial = s.placement.orientation == LesionOrientation::radial;
    Vec direction = radial ? Vec{1.0, 0.0, 0.0} : random_direction(s.orientation, flat, lesions);
    const bool clustered = lesions.uniform() < s.clustering.fraction;
    bool placed = false;
    for (int attempt = 0; attempt < kPlacementTries && !placed; ++attempt) {
      Vec centre = s.placement.density == LesionDensity::periventricular && !clustered
                       ? periventricular_centre(placer, ventricles, s.placement.decay_mm, kLesionRegion, lesions)
                       : placer.point_in_head(kLesionRegion, lesions);
      if (clustered) {
        Vec offset{};
        do {
          for (std::size_t axis = 0; axis < 3; ++axis)
            offset[axis] = (axis == 2 && flat) ? 0.0 : lesions.uniform(-1.0, 1.0) * s.clustering.radius_mm;
        } while (offset[0] * offset[0] + offset[1] * offset[1] + offset[2] * offset[2] >
                 s.clustering.radius_mm * s.clustering.radius_mm);
        for (std::size_t axis = 0; axis < 3; ++axis) centre[axis] = cluster_centre[axis] + offset[axis];
      }
      if (radial) {
        OrientationOptions outward;
        outward.isotropic = false;
        outward.axis = ventricles.radial_direction(centre);
        outward.spread_deg = s.placement.radial_spread_deg;
        direction = random_direction(outward, flat, lesions);
      }
      placed = placer.fits(centre, direction, 0.5 * length, 0.5 * width, kLesionRegion);
      if (placed) add_object(ObjectKind::lesion, centre, direction, length, width, contrast);
    }
    if (!placed) ++truth.objects_dropped;
  }

  // Look-alikes: round dots, then long thin lines.
  const int dot_count = s.dots.sample(distractors);
  for (int n = 0; n < dot_count; ++n) {
    const double diameter = s.dot_diameter_mm.sample(distractors);
    const double contrast = s.dot_contrast.sample(distractors);
    bool placed = false;
    for (int attempt = 0; attempt < kPlacementTries && !placed; ++attempt) {
      const Vec centre = placer.point_in_head(kLesionRegion, distractors);
      placed = placer.fits(centre, {1.0, 0.0, 0.0}, 0.0, 0.5 * diameter, kLesionRegion);
      if (placed) add_object(ObjectKind::dot_distractor, centre, {1.0, 0.0, 0.0}, diameter, diameter, contrast);
    }
    if (!placed) ++truth.objects_dropped;
  }
  const int line_count = s.lines.sample(distractors);
  const OrientationOptions any_direction;
  for (int n = 0; n < line_count; ++n) {
    const double length = s.line_length_mm.sample(distractors);
    const double width = s.line_width_mm.sample(distractors);
    const double contrast = s.line_contrast.sample(distractors);
    const Vec direction = random_direction(any_direction, flat, distractors);
    bool placed = false;
    if (s.line_shape == LineShape::tube) {
      const Tube drawn_shape = tube_shape(s, length, width, direction, flat, distractors);
      for (int attempt = 0; attempt < kPlacementTries && !placed; ++attempt) {
        const Vec centre = placer.point_in_head(kLineRegion, distractors);
        const Tube tube = centred_at(drawn_shape, centre);
        placed = placer.fits(tube, kLineRegion);
        if (!placed) continue;
        const Vec a = tube.pieces.front().start_mm, b = tube.pieces.back().end_mm();
        Vec chord{b[0] - a[0], b[1] - a[1], b[2] - a[2]};
        const double norm = std::sqrt(chord[0] * chord[0] + chord[1] * chord[1] + chord[2] * chord[2]);
        for (double& c : chord) c /= norm;  // three arcs of at most a quarter turn each never close
        add_object(ObjectKind::line_distractor, centre, chord, length, width, contrast, &tube);
      }
    }
    for (int attempt = 0; attempt < kPlacementTries && !placed && s.line_shape == LineShape::straight; ++attempt) {
      const Vec centre = placer.point_in_head(kLineRegion, distractors);
      placed = placer.fits(centre, direction, 0.5 * length, 0.5 * width, kLineRegion);
      if (placed) add_object(ObjectKind::line_distractor, centre, direction, length, width, contrast);
    }
    if (!placed) ++truth.objects_dropped;
  }
  return rest;
}

}  // namespace frugal
