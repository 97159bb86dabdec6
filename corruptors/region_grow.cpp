#include "corruptors/region_grow.h"

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <opencv2/imgproc.hpp>
#include <string>

#include "corruptors/detection.h"
#include "corruptors/object_regions.h"
#include "phantoms/image_views.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace {

std::string shape_text(const Shape& shape) {
  return std::to_string(shape.x) + " x " + std::to_string(shape.y) + " x " + std::to_string(shape.z);
}

bool allowed_connectivity(int connectivity, int dims) {
  return dims == 2 ? (connectivity == 4 || connectivity == 8) : (connectivity == 6 || connectivity == 26);
}

// The options' connectivity for an image of `dims` dimensions (0 = the smallest). validate()
// cannot check it against the subject, so a 3D value on a 2D subject (or the reverse) is caught here.
int resolve_connectivity(int requested, int dims) {
  if (requested == 0) return dims == 2 ? 4 : 6;
  if (!allowed_connectivity(requested, dims))
    throw UserError("region_grow.connectivity is " + std::to_string(requested) + ", but the subject is " +
                    std::to_string(dims) + "D; allowed " + (dims == 2 ? "0, 4 or 8" : "0, 6 or 26") +
                    " (see docs/raters.md)");
  return requested;
}

// 3D growing with skimage.segmentation.flood's inclusion rule (skimage 0.19,
// morphology/_flood_fill.py): the bounds seed - tolerance and seed + tolerance are computed in
// double and rounded to the image's float type, and a neighbour joins when low <= value <= high
// (inclusive). Breadth-first over 6 or 26 neighbours.
void flood_3d(const FloatImage& image, const std::array<int, 3>& seed, double tolerance, int connectivity,
              LabelImage& region) {
  const Shape& shape = image.shape();
  const double seed_value = image.at(seed[0], seed[1], seed[2]);
  const auto low = static_cast<float>(seed_value - tolerance);
  const auto high = static_cast<float>(seed_value + tolerance);
  std::array<std::array<int, 3>, 26> offsets{};
  std::size_t neighbours = 0;
  for (int dz = -1; dz <= 1; ++dz)
    for (int dy = -1; dy <= 1; ++dy)
      for (int dx = -1; dx <= 1; ++dx) {
        const int steps = std::abs(dx) + std::abs(dy) + std::abs(dz);
        if (steps == 0 || (connectivity == 6 && steps > 1)) continue;
        offsets[neighbours++] = {dx, dy, dz};
      }
  std::vector<std::array<int, 3>> queue{seed};
  region.at(seed[0], seed[1], seed[2]) = 1;  // the seed joins whatever its value (as in skimage)
  for (std::size_t head = 0; head < queue.size(); ++head) {
    const std::array<int, 3> voxel = queue[head];
    for (std::size_t n = 0; n < neighbours; ++n) {
      const int x = voxel[0] + offsets[n][0], y = voxel[1] + offsets[n][1], z = voxel[2] + offsets[n][2];
      if (x < 0 || y < 0 || z < 0 || x >= shape.x || y >= shape.y || z >= shape.z) continue;
      std::uint8_t& joined = region.at(x, y, z);
      if (joined != 0) continue;
      const float value = image.at(x, y, z);
      if (!(low <= value && value <= high)) continue;
      joined = 1;
      queue.push_back({x, y, z});
    }
  }
}

// One seed: where it sits and how the growing is bounded.
struct Seed {
  std::array<int, 3> voxel{};
  double ball_radius_mm = 0.0;  // a leaked region is cut back to this ball around the seed
};

std::array<int, 3> voxel_of(const Shape& shape, std::size_t index) {
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y);
  return {static_cast<int>(index % nx), static_cast<int>((index / nx) % ny), static_cast<int>(index / (nx * ny))};
}

double distance_mm(const Geometry& geometry, const std::array<double, 3>& a, const std::array<double, 3>& b) {
  double sum = 0.0;
  for (std::size_t axis = 0; axis < 3; ++axis) {
    const double d = (a[axis] - b[axis]) * geometry.spacing_mm[axis];
    sum += d * d;
  }
  return std::sqrt(sum);
}

std::array<double, 3> as_double(const std::array<int, 3>& voxel) {
  return {static_cast<double>(voxel[0]), static_cast<double>(voxel[1]), static_cast<double>(voxel[2])};
}

// Where the rater clicks. On an object with a record: the voxel of its truth region within one
// voxel of the centre that stands out most (brightest for a bright object, darkest for a dark
// one), as a user clicks the most conspicuous spot; this also keeps the seed on a thin object
// whose centre voxel is not its own. On a component without a record (voids): its voxel nearest
// its centroid. The ball that bounds a leak has radius half the object's length (or, without a
// record, the largest distance from the seed to the component) plus one voxel.
Seed choose_seed(const Subject& subject, const ObjectRegion& region) {
  const Geometry& geometry = subject.image.geometry();
  const Shape& shape = geometry.shape;
  const double one_voxel_mm =
      std::max({geometry.spacing_mm[0], geometry.spacing_mm[1], shape.z > 1 ? geometry.spacing_mm[2] : 0.0});
  Seed seed;
  if (region.object >= 0) {
    const ObjectRecord& object = subject.truth.objects[static_cast<std::size_t>(region.object)];
    const std::array<double, 3> centre = voxel_coordinates(geometry, object.centre_mm);
    const double sign = object.contrast < 0.0 ? -1.0 : 1.0;
    double best = -std::numeric_limits<double>::infinity();
    double best_distance = std::numeric_limits<double>::infinity();
    bool found = false;
    for (std::size_t index : region.voxels) {  // ascending, so ties keep the lowest index
      const std::array<int, 3> voxel = voxel_of(shape, index);
      const double distance = distance_mm(geometry, as_double(voxel), centre);
      bool near = true;
      for (std::size_t axis = 0; axis < 3; ++axis)
        near = near && std::abs(voxel[axis] - std::lround(shape.z == 1 && axis == 2 ? 0.0 : centre[axis])) <= 1;
      if (near) {
        const double value = sign * subject.image.data()[index];
        if (!found || value > best) {
          best = value;
          seed.voxel = voxel;
          found = true;
        }
      } else if (!found && distance < best_distance) {
        best_distance = distance;  // fallback: the region voxel nearest the centre
        seed.voxel = voxel;
      }
    }
    seed.ball_radius_mm = 0.5 * object.length_mm + one_voxel_mm;
    return seed;
  }
  std::array<double, 3> centroid{};
  for (std::size_t index : region.voxels) {
    const std::array<int, 3> voxel = voxel_of(shape, index);
    for (std::size_t axis = 0; axis < 3; ++axis) centroid[axis] += voxel[axis];
  }
  for (double& c : centroid) c /= static_cast<double>(region.voxels.size());
  double best_distance = std::numeric_limits<double>::infinity();
  for (std::size_t index : region.voxels) {
    const std::array<int, 3> voxel = voxel_of(shape, index);
    const double distance = distance_mm(geometry, as_double(voxel), centroid);
    if (distance < best_distance) {
      best_distance = distance;
      seed.voxel = voxel;
    }
  }
  double farthest = 0.0;
  for (std::size_t index : region.voxels)
    farthest = std::max(farthest, distance_mm(geometry, as_double(voxel_of(shape, index)), as_double(seed.voxel)));
  seed.ball_radius_mm = farthest + one_voxel_mm;
  return seed;
}

// How conspicuous a candidate is: |contrast| x width for objects with a record, volume without.
double conspicuity(const Subject& subject, const ObjectRegion& region) {
  if (region.object < 0) return static_cast<double>(region.voxels.size());
  const ObjectRecord& object = subject.truth.objects[static_cast<std::size_t>(region.object)];
  return std::abs(object.contrast) * object.width_mm;
}

}  // namespace

LabelImage flood_region(const FloatImage& image, const std::array<int, 3>& seed, double tolerance, int connectivity) {
  if (image.empty()) throw UserError("region growing: the image is empty");
  const Shape& shape = image.shape();
  if (seed[0] < 0 || seed[1] < 0 || seed[2] < 0 || seed[0] >= shape.x || seed[1] >= shape.y || seed[2] >= shape.z)
    throw UserError("region growing: the seed (" + std::to_string(seed[0]) + ", " + std::to_string(seed[1]) + ", " +
                    std::to_string(seed[2]) + ") lies outside the image of " + shape_text(shape) + " voxels");
  if (!(tolerance >= 0.0 && std::isfinite(tolerance)))
    throw UserError("region growing: the tolerance is " + std::to_string(tolerance) +
                    "; it must be a finite number >= 0");
  const int dims = shape.dims();
  if (!allowed_connectivity(connectivity, dims))
    throw UserError("region growing: connectivity " + std::to_string(connectivity) + " on a " + std::to_string(dims) +
                    "D image; allowed " + (dims == 2 ? "4 or 8" : "6 or 26"));
  LabelImage region(image.geometry(), 0);
  if (dims == 3) {
    flood_3d(image, seed, tolerance, connectivity, region);
    return region;
  }
  // OpenCV's fixed-range flood fill: a pixel joins when seed - tolerance <= value <= seed +
  // tolerance (differences taken in float). MASK_ONLY leaves the image untouched, so the view of
  // the const image is never written; the fill value 1 goes into bits 8-15 of the flags.
  cv::Mat view = slice_view(image);
  cv::Mat mask = cv::Mat::zeros(shape.y + 2, shape.x + 2, CV_8U);
  const int flags = connectivity | cv::FLOODFILL_FIXED_RANGE | cv::FLOODFILL_MASK_ONLY | (1 << 8);
  cv::floodFill(view, mask, cv::Point(seed[0], seed[1]), cv::Scalar(), nullptr, cv::Scalar(tolerance),
                cv::Scalar(tolerance), flags);
  mask(cv::Rect(1, 1, shape.x, shape.y)).copyTo(slice_view(region));
  return region;
}

Label make_partial_mask(const Subject& subject, const RaterOptions& rater, RandomStream& random) {
  const RegionGrowOptions& options = rater.region_grow;
  const Geometry& geometry = subject.image.geometry();
  const int connectivity = resolve_connectivity(options.connectivity, geometry.shape.dims());
  const std::vector<bool> noticed = notice_objects(subject.truth, rater.detection, random);
  FRUGAL_CHECK(noticed.size() == subject.truth.objects.size());

  // Candidates: noticed objects (lesions and look-alikes taken for lesions) and, without records,
  // every lesion component; the most conspicuous first, ties in truth order (stable sort).
  std::vector<ObjectRegion> regions = object_regions(subject);
  std::vector<std::pair<double, std::size_t>> candidates;
  for (std::size_t r = 0; r < regions.size(); ++r) {
    const int object = regions[r].object;
    if (object >= 0 && !noticed[static_cast<std::size_t>(object)]) continue;
    candidates.emplace_back(conspicuity(subject, regions[r]), r);
  }
  std::stable_sort(candidates.begin(), candidates.end(),
                   [](const auto& a, const auto& b) { return a.first > b.first; });

  Label label;
  label.kind = LabelKind::partial_mask;
  label.mask = LabelImage(subject.labels.geometry(), kUnmarked);
  const std::size_t used = std::min(candidates.size(), static_cast<std::size_t>(std::max(options.seeds, 0)));
  for (std::size_t c = 0; c < used; ++c) {
    const Seed seed = choose_seed(subject, regions[candidates[c].second]);
    const double seed_value = subject.image.at(seed.voxel[0], seed.voxel[1], seed.voxel[2]);
    const LabelImage grown =
        flood_region(subject.image, seed.voxel, options.tolerance * std::abs(seed_value), connectivity);
    std::size_t voxels = 0;
    for (std::uint8_t v : grown.voxels()) voxels += v;
    // A region above max_region_mm3 leaked into the background: the tool keeps only what lies
    // in the object's bounding ball around the seed.
    const bool leaked = static_cast<double>(voxels) * geometry.voxel_volume_mm3() > options.max_region_mm3;
    for (std::size_t i = 0; i < grown.size(); ++i) {
      if (grown.data()[i] == 0) continue;
      if (leaked &&
          distance_mm(geometry, as_double(voxel_of(geometry.shape, i)), as_double(seed.voxel)) > seed.ball_radius_mm)
        continue;
      label.mask.data()[i] = kMarkedLesion;
    }
  }
  label.cost_seconds = rater.cost.partial_per_image_s + rater.cost.partial_per_seed_s * static_cast<double>(used);
  return label;
}

}  // namespace frugal
