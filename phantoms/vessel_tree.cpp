#include "phantoms/vessel_tree.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

namespace frugal {

namespace {

using Vec = std::array<double, 3>;

constexpr double kBranchTaper = 0.85;        // end radius / start radius along one branch (invented)
constexpr double kChildLength = 0.75;        // child length / parent length (invented)
constexpr double kFanHalfAngleDeg = 80.0;    // trunks spread over +-this around the lateral direction (invented)
constexpr double kMinBranchAngleDeg = 20.0;  // each child leaves its parent's end at 20..40 degrees (invented)
constexpr double kMaxBranchAngleDeg = 40.0;

struct Grower {
  const TreeOptions& options;
  const LungOutline& lung;
  bool flat;
  RandomStream& random;
  std::vector<TubePiece>* solid;  // where branches go
  std::vector<TubePiece>* lumen;  // airways only: the lumen copies

  double lung_radius(const Vec& p) const {
    double sum = 0.0;
    for (std::size_t axis = 0; axis < (flat ? 2U : 3U); ++axis) {
      const double u = (p[axis] - lung.centre_mm[axis]) / lung.semi_axes_mm[axis];
      sum += u * u;
    }
    return std::sqrt(sum);
  }

  Vec random_unit() {
    Vec d{};
    double norm = 0.0;
    do {
      for (double& c : d) c = random.normal();
      norm = std::sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
    } while (norm < 1e-9);
    return {d[0] / norm, d[1] / norm, d[2] / norm};
  }

  // A unit vector perpendicular to `t`: in the image plane (2D) or random (3D).
  Vec across(const Vec& t) {
    if (flat) return {-t[1], t[0], 0.0};
    const Vec r = random_unit();
    const double along = r[0] * t[0] + r[1] * t[1] + r[2] * t[2];
    Vec d{r[0] - along * t[0], r[1] - along * t[1], r[2] - along * t[2]};
    const double norm = std::sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
    if (norm < 1e-9) return std::abs(t[0]) < 0.9 ? Vec{0.0, -t[2], t[1]} : Vec{t[2], 0.0, -t[0]};
    return {d[0] / norm, d[1] / norm, d[2] / norm};
  }

  void grow(const Vec& start, const Vec& tangent, double length, double radius, int generation) {
    if (radius < options.min_radius_mm || generation >= options.generations) return;
    const double bend = random.uniform(-1.0, 1.0) * options.bend_deg * M_PI / 180.0;
    const Vec towards = across(tangent);
    const double child_angles[2] = {random.uniform(kMinBranchAngleDeg, kMaxBranchAngleDeg),
                                    -random.uniform(kMinBranchAngleDeg, kMaxBranchAngleDeg)};
    const Vec branching_plane = across(tangent);
    TubePiece piece = start_tube(start, tangent, length, bend, towards, radius, radius * kBranchTaper);
    // A branch that would leave the lung ends at its last centreline point inside (the field
    // clips the rest of its surface) and does not branch further.
    const int samples = std::max(2, static_cast<int>(std::ceil(length)));
    int inside = samples;
    for (int n = 1; n <= samples; ++n)
      if (lung_radius(piece.point(length * n / samples)) > 1.0) {
        inside = n - 1;
        break;
      }
    const bool cut = inside < samples;
    if (cut) {
      const double kept = length * inside / samples;
      if (kept < radius) return;
      const double curvature = piece.curvature_per_mm;
      piece.length_mm = kept;
      piece.curvature_per_mm = curvature;  // the same arc, shorter
    }
    solid->push_back(piece);
    if (lumen != nullptr) {
      TubePiece air = piece;
      air.start_radius_mm *= 1.0 - options.airway_wall_fraction;
      air.end_radius_mm *= 1.0 - options.airway_wall_fraction;
      lumen->push_back(air);
    }
    if (cut) return;
    // Murray's law for a symmetric split: r_child = r_parent / 2^(1/3) (Murray 1926, from memory).
    const double child_radius = piece.end_radius_mm / std::cbrt(2.0);
    const Vec end = piece.end_mm(), end_tangent = piece.tangent_at(piece.length_mm);
    const double norm_t =
        std::sqrt(end_tangent[0] * end_tangent[0] + end_tangent[1] * end_tangent[1] + end_tangent[2] * end_tangent[2]);
    const Vec t{end_tangent[0] / norm_t, end_tangent[1] / norm_t, end_tangent[2] / norm_t};
    const double along = branching_plane[0] * t[0] + branching_plane[1] * t[1] + branching_plane[2] * t[2];
    Vec p{branching_plane[0] - along * t[0], branching_plane[1] - along * t[1], branching_plane[2] - along * t[2]};
    const double norm_p = std::sqrt(p[0] * p[0] + p[1] * p[1] + p[2] * p[2]);
    if (norm_p < 1e-9)
      p = across(t);
    else
      for (double& c : p) c /= norm_p;
    for (double angle_deg : child_angles) {
      const double angle = angle_deg * M_PI / 180.0;
      const Vec child{std::cos(angle) * t[0] + std::sin(angle) * p[0], std::cos(angle) * t[1] + std::sin(angle) * p[1],
                      std::cos(angle) * t[2] + std::sin(angle) * p[2]};
      grow(end, child, length * kChildLength, child_radius, generation + 1);
    }
  }
};

// Adds one piece's voxels to `candidates` (voxel index, piece index) where the piece can reach.
void collect(const TubePiece& piece, int index, const Geometry& g, const LabelImage& field, double half_diagonal,
             std::vector<std::pair<std::size_t, int>>& candidates, std::vector<float>& nearest) {
  Vec low{}, high{};
  piece.bounds(low, high);
  const double margin = piece.lipschitz() * half_diagonal;
  const bool flat = g.shape.z == 1;
  int first[3], last[3];
  const int extents[3] = {g.shape.x, g.shape.y, g.shape.z};
  for (std::size_t axis = 0; axis < 3; ++axis) {
    first[axis] = std::max(0, static_cast<int>(std::floor((low[axis] - g.origin_mm[axis]) / g.spacing_mm[axis])) - 1);
    last[axis] = std::min(extents[axis] - 1,
                          static_cast<int>(std::ceil((high[axis] - g.origin_mm[axis]) / g.spacing_mm[axis])) + 1);
  }
  if (flat) first[2] = last[2] = 0;
  for (int k = first[2]; k <= last[2]; ++k)
    for (int j = first[1]; j <= last[1]; ++j)
      for (int i = first[0]; i <= last[0]; ++i) {
        const std::size_t n = field.index(i, j, k);
        if (field.data()[n] == 0) continue;
        const double level = piece.level(g.world_mm(i, j, k));
        if (level >= margin) continue;
        candidates.emplace_back(n, index);
        nearest[n] = std::min(nearest[n], static_cast<float>(level / margin));  // in units of the piece's margin
      }
}

// Coverage and centre rule for the union of `pieces`.
void rasterise_union(const std::vector<TubePiece>& pieces, const Geometry& g, const LabelImage& field,
                     FloatImage& coverage, LabelImage& where, std::uint8_t code) {
  const bool flat = g.shape.z == 1;
  const double half_diagonal = 0.5 * std::sqrt(g.spacing_mm[0] * g.spacing_mm[0] + g.spacing_mm[1] * g.spacing_mm[1] +
                                               (flat ? 0.0 : g.spacing_mm[2] * g.spacing_mm[2]));
  std::vector<std::pair<std::size_t, int>> candidates;
  std::vector<float> nearest(field.size(), std::numeric_limits<float>::infinity());
  for (std::size_t p = 0; p < pieces.size(); ++p)
    collect(pieces[p], static_cast<int>(p), g, field, half_diagonal, candidates, nearest);
  // Group the candidates by voxel (a counting sort: linear, and it keeps the pieces' order).
  std::vector<std::uint32_t> start(field.size() + 1, 0);
  for (const auto& candidate : candidates) ++start[candidate.first + 1];
  for (std::size_t n = 1; n < start.size(); ++n) start[n] += start[n - 1];
  std::vector<int> by_voxel(candidates.size());
  {
    std::vector<std::uint32_t> next(start.begin(), start.end() - 1);
    for (const auto& candidate : candidates) by_voxel[next[candidate.first]++] = candidate.second;
  }
  const int sub = flat ? 4 : 3;
  const int depth = flat ? 1 : sub;
  for (std::size_t n = 0; n < field.size(); ++n) {
    const std::size_t first = start[n], last = start[n + 1];
    if (first == last) continue;
    const int i = static_cast<int>(n % static_cast<std::size_t>(g.shape.x));
    const int j = static_cast<int>((n / static_cast<std::size_t>(g.shape.x)) % static_cast<std::size_t>(g.shape.y));
    const int k = static_cast<int>(n / (static_cast<std::size_t>(g.shape.x) * static_cast<std::size_t>(g.shape.y)));
    const Vec centre = g.world_mm(i, j, k);
    double centre_level = std::numeric_limits<double>::infinity();
    for (std::size_t c = first; c < last; ++c)
      centre_level = std::min(centre_level, pieces[static_cast<std::size_t>(by_voxel[c])].level(centre));
    double share = 0.0;
    if (nearest[n] <= -1.0F) {
      share = 1.0;  // some piece covers the whole voxel
    } else {
      int inside = 0;
      for (int c = 0; c < depth; ++c)
        for (int b = 0; b < sub; ++b)
          for (int a = 0; a < sub; ++a) {
            const double oa = (a + 0.5) / sub - 0.5, ob = (b + 0.5) / sub - 0.5;
            const double oc = flat ? 0.0 : (c + 0.5) / sub - 0.5;
            const Vec p{centre[0] + oa * g.spacing_mm[0], centre[1] + ob * g.spacing_mm[1],
                        centre[2] + oc * g.spacing_mm[2]};
            for (std::size_t q = first; q < last; ++q)
              if (pieces[static_cast<std::size_t>(by_voxel[q])].level(p) <= 0.0) {
                ++inside;
                break;
              }
          }
      share = static_cast<double>(inside) / (sub * sub * depth);
    }
    coverage.data()[n] = static_cast<float>(share);
    if (centre_level <= 0.0) where.data()[n] = code;
  }
}

}  // namespace

LungTree LungTree::moved(const RigidPose& pose) const {
  LungTree tree;
  for (const TubePiece& piece : vessels) tree.vessels.push_back(piece.moved(pose));
  for (const TubePiece& piece : airway_walls) tree.airway_walls.push_back(piece.moved(pose));
  for (const TubePiece& piece : airway_lumens) tree.airway_lumens.push_back(piece.moved(pose));
  return tree;
}

LungTree grow_lung_tree(const TreeOptions& options, const LungOutline lungs[2], bool flat, RandomStream& random) {
  LungTree tree;
  if (options.generations == 0) return tree;
  for (int side = 0; side < 2; ++side) {
    const LungOutline& lung = lungs[side];
    const double medial = side == 0 ? 1.0 : -1.0;  // lung 0 lies at -x, so its hilum faces +x
    // The hilum: on the medial side of the lung, halfway from its centre to its edge.
    const Vec hilum{lung.centre_mm[0] + medial * 0.5 * lung.semi_axes_mm[0], lung.centre_mm[1], lung.centre_mm[2]};
    const double lateral = side == 0 ? M_PI : 0.0;
    for (int kind = 0; kind < 2; ++kind) {
      const bool airway = kind == 1;
      const int trunks = airway ? options.airway_trunks : options.vessel_trunks;
      Grower grower{options,
                    lung,
                    flat,
                    random,
                    airway ? &tree.airway_walls : &tree.vessels,
                    airway ? &tree.airway_lumens : nullptr};
      for (int trunk = 0; trunk < trunks; ++trunk) {
        const double fan = kFanHalfAngleDeg * M_PI / 180.0;
        const double angle = lateral - fan + 2.0 * fan * (trunk + 0.5) / trunks + random.uniform(-0.1, 0.1);
        Vec direction{std::cos(angle), std::sin(angle), flat ? 0.0 : random.uniform(-0.5, 0.5)};
        const double norm =
            std::sqrt(direction[0] * direction[0] + direction[1] * direction[1] + direction[2] * direction[2]);
        for (double& c : direction) c /= norm;
        grower.grow(hilum, direction, options.trunk_length_mm,
                    airway ? options.airway_radius_mm : options.vessel_radius_mm, 0);
      }
    }
  }
  return tree;
}

TreeRaster rasterise_tree(const LungTree& tree, const Geometry& geometry, const LabelImage& field) {
  TreeRaster raster{FloatImage(geometry, 0.0F), FloatImage(geometry, 0.0F), LabelImage(geometry, kNoTree)};
  std::vector<TubePiece> solid = tree.vessels;
  solid.insert(solid.end(), tree.airway_walls.begin(), tree.airway_walls.end());
  rasterise_union(solid, geometry, field, raster.tissue, raster.where, kTreeTissue);
  // The lumen lies inside its wall at every point, so its coverage never exceeds the tissue's.
  rasterise_union(tree.airway_lumens, geometry, field, raster.air, raster.where, kTreeLumen);
  return raster;
}

}  // namespace frugal
