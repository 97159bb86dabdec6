#include "corruptors/object_regions.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

namespace frugal {

namespace {

std::uint8_t label_code(ObjectKind kind) {
  switch (kind) {
    case ObjectKind::lesion:
      return kLesion;
    case ObjectKind::dot_distractor:
      return kDotDistractor;
    case ObjectKind::line_distractor:
      return kLineDistractor;
  }
  return kLesion;
}

// The voxel holding `code` nearest to `centre` (continuous voxel coordinates) among the voxel
// containing it and its neighbours; SIZE_MAX when there is none.
std::size_t voxel_near(const LabelImage& labels, const Geometry& geometry, const std::array<double, 3>& centre,
                       std::uint8_t code) {
  const Shape& shape = labels.shape();
  const int cx = static_cast<int>(std::lround(centre[0])), cy = static_cast<int>(std::lround(centre[1]));
  const int cz = shape.z == 1 ? 0 : static_cast<int>(std::lround(centre[2]));
  const auto inside = [&](int x, int y, int z) {
    return x >= 0 && y >= 0 && z >= 0 && x < shape.x && y < shape.y && z < shape.z;
  };
  if (inside(cx, cy, cz) && labels.at(cx, cy, cz) == code) return labels.index(cx, cy, cz);
  std::size_t best = std::numeric_limits<std::size_t>::max();
  double best_distance = std::numeric_limits<double>::infinity();
  const int dz_range = shape.z == 1 ? 0 : 1;
  for (int dz = -dz_range; dz <= dz_range; ++dz)
    for (int dy = -1; dy <= 1; ++dy)
      for (int dx = -1; dx <= 1; ++dx) {
        const int x = cx + dx, y = cy + dy, z = cz + dz;
        if (!inside(x, y, z) || labels.at(x, y, z) != code) continue;
        const double ex = (x - centre[0]) * geometry.spacing_mm[0], ey = (y - centre[1]) * geometry.spacing_mm[1],
                     ez = shape.z == 1 ? 0.0 : (z - centre[2]) * geometry.spacing_mm[2];
        const double distance = ex * ex + ey * ey + ez * ez;
        const std::size_t index = labels.index(x, y, z);
        // Ties go to the lower index, so the choice never depends on the loop order.
        if (distance < best_distance || (distance == best_distance && index < best)) {
          best = index;
          best_distance = distance;
        }
      }
  return best;
}

// Breadth-first growth of the component of `code` at `start`; marks its voxels in `seen` (which
// must not mark any of them yet) and leaves them marked.
ObjectRegion grow_component(const LabelImage& labels, std::size_t start, std::uint8_t code,
                            std::vector<std::uint8_t>& seen) {
  FRUGAL_CHECK(start < labels.size() && labels.data()[start] == code && seen.size() == labels.size());
  const Shape& shape = labels.shape();
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y);
  ObjectRegion region;
  std::vector<std::size_t>& queue = region.voxels;  // the breadth-first queue is the result
  queue.push_back(start);
  seen[start] = 1;
  const int dz_range = shape.z == 1 ? 0 : 1;
  region.low = {shape.x, shape.y, shape.z};
  region.high = {-1, -1, -1};
  for (std::size_t head = 0; head < queue.size(); ++head) {
    const std::size_t index = queue[head];
    const int x = static_cast<int>(index % nx), y = static_cast<int>((index / nx) % ny),
              z = static_cast<int>(index / (nx * ny));
    region.low = {std::min(region.low[0], x), std::min(region.low[1], y), std::min(region.low[2], z)};
    region.high = {std::max(region.high[0], x), std::max(region.high[1], y), std::max(region.high[2], z)};
    for (int dz = -dz_range; dz <= dz_range; ++dz)
      for (int dy = -1; dy <= 1; ++dy)
        for (int dx = -1; dx <= 1; ++dx) {
          const int u = x + dx, v = y + dy, w = z + dz;
          if (u < 0 || v < 0 || w < 0 || u >= shape.x || v >= shape.y || w >= shape.z) continue;
          const std::size_t next = labels.index(u, v, w);
          if (seen[next] != 0 || labels.data()[next] != code) continue;
          seen[next] = 1;
          queue.push_back(next);
        }
  }
  std::sort(region.voxels.begin(), region.voxels.end());
  return region;
}

}  // namespace

std::array<double, 3> voxel_coordinates(const Geometry& geometry, const std::array<double, 3>& world_mm) {
  // direction is a rotation, so its inverse is its transpose.
  const std::array<double, 9>& d = geometry.direction;
  const double w[3] = {world_mm[0] - geometry.origin_mm[0], world_mm[1] - geometry.origin_mm[1],
                       world_mm[2] - geometry.origin_mm[2]};
  std::array<double, 3> voxel{};
  for (std::size_t axis = 0; axis < 3; ++axis)
    voxel[axis] = (d[axis] * w[0] + d[3 + axis] * w[1] + d[6 + axis] * w[2]) / geometry.spacing_mm[axis];
  return voxel;
}

ObjectRegion connected_region(const LabelImage& labels, std::size_t start, std::uint8_t code) {
  std::vector<std::uint8_t> seen(labels.size(), 0);
  return grow_component(labels, start, code, seen);
}

std::vector<ObjectRegion> object_regions(const Subject& subject) {
  const LabelImage& labels = subject.labels;
  const Geometry& geometry = labels.geometry();
  std::vector<ObjectRegion> regions;
  std::vector<std::uint8_t> seen(labels.size(), 0);
  if (!subject.truth.objects.empty()) {
    for (std::size_t n = 0; n < subject.truth.objects.size(); ++n) {
      const ObjectRecord& object = subject.truth.objects[n];
      const std::uint8_t code = label_code(object.kind);
      const std::size_t start = voxel_near(labels, geometry, voxel_coordinates(geometry, object.centre_mm), code);
      if (start == std::numeric_limits<std::size_t>::max()) continue;
      ObjectRegion region = grow_component(labels, start, code, seen);
      // Unmarked again: two records may share a component when their objects touch.
      for (std::size_t voxel : region.voxels) seen[voxel] = 0;
      region.object = static_cast<int>(n);
      regions.push_back(std::move(region));
    }
    return regions;
  }
  for (std::size_t i = 0; i < labels.size(); ++i)
    if (labels.data()[i] == kLesion && seen[i] == 0) regions.push_back(grow_component(labels, i, kLesion, seen));
  return regions;
}

}  // namespace frugal
