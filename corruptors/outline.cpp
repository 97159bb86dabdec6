#include "corruptors/outline.h"

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <opencv2/imgproc.hpp>
#include <utility>
#include <vector>

#include "corruptors/detection.h"
#include "phantoms/distance_transform.h"
#include "corruptors/object_regions.h"
#include "phantoms/image_ops.h"
#include "phantoms/image_views.h"

namespace frugal {

namespace {

// Fine-grid points per voxel and axis on which the boundary between voxel centres is placed
// (odd, so that every voxel centre is a fine point).
constexpr int kFine = 3;
// Sizes of the added errors (invented defaults, documented in docs/raters.md): a protrusion is a
// ball of radius uniform in [1, 2] mm, a hole one of radius uniform in [0.5, 1] mm, a spurious blob
// one of radius uniform in [1, 2.5] mm kept 2 mm clear of every object and outline.
constexpr double kProtrusionRadiusMm[2] = {1.0, 2.0};
constexpr double kHoleRadiusMm[2] = {0.5, 1.0};
constexpr double kSpuriousRadiusMm[2] = {1.0, 2.5};
constexpr double kSpuriousClearanceMm = 2.0;
constexpr int kSpuriousTries = 200;  // random field voxels tried per blob before giving it up

using Voxel = std::array<int, 3>;

// A box of the image, inclusive bounds, with its own x-fastest indexing.
struct Box {
  Voxel low{};
  Voxel high{};
  int size(std::size_t axis) const { return high[axis] - low[axis] + 1; }
  Shape shape() const { return {size(0), size(1), size(2)}; }
  std::size_t count() const { return shape().voxel_count(); }
  std::size_t index(int x, int y, int z) const {
    return (static_cast<std::size_t>(z) * static_cast<std::size_t>(size(1)) + static_cast<std::size_t>(y)) *
               static_cast<std::size_t>(size(0)) +
           static_cast<std::size_t>(x);
  }
};

Voxel voxel_of(const Shape& shape, std::size_t index) {
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y);
  return {static_cast<int>(index % nx), static_cast<int>((index / nx) % ny), static_cast<int>(index / (nx * ny))};
}

// The smooth random displacement in mm along each image axis (z only in 3D): white noise filtered
// by a Gaussian of SD displacement_scale_mm. To save work the noise lives on a coarse grid (nodes
// every `step` voxels, step at most half the filter's SD) and is upsampled linearly
// (image_ops.h). The filter's noise gain scales the nodes to SD displacement_sd_mm; between nodes
// linear interpolation of correlated values lowers the variance by the known factor
// (1 - u)^2 + u^2 + 2 u (1 - u) rho per axis (u the position within the cell, rho the nodes'
// correlation, exp(-lag^2 / (4 sigma^2)) for Gaussian-filtered white noise), which is divided
// out, so every voxel's displacement has SD displacement_sd_mm (away from the image border).
std::array<FloatImage, 3> displacement_field(const Geometry& geometry, const OutlineOptions& options,
                                             RandomStream& random) {
  const bool flat = geometry.shape.z == 1;
  const std::size_t axes = flat ? 2 : 3;
  const double scale = options.displacement_scale_mm;
  double largest_spacing = 0.0;
  for (std::size_t axis = 0; axis < axes; ++axis)
    largest_spacing = std::max(largest_spacing, geometry.spacing_mm[axis]);
  const int step = std::max(1, static_cast<int>(std::floor(scale / (2.0 * largest_spacing))));
  Geometry coarse = geometry;
  coarse.shape = coarse_extent(geometry.shape, step);
  for (std::size_t axis = 0; axis < axes; ++axis) coarse.spacing_mm[axis] *= step;
  const std::array<double, 3> sigma{scale, scale, flat ? 0.0 : scale};

  // 1 / sqrt(variance factor of the interpolation) at every fine position along each axis.
  std::array<std::vector<float>, 3> correction;
  const int fine_extent[3] = {geometry.shape.x, geometry.shape.y, geometry.shape.z};
  const int coarse_extent_of[3] = {coarse.shape.x, coarse.shape.y, coarse.shape.z};
  for (std::size_t axis = 0; axis < 3; ++axis) {
    const double lag = step * geometry.spacing_mm[axis];
    const double rho = std::exp(-lag * lag / (4.0 * scale * scale));
    for (int i = 0; i < fine_extent[axis]; ++i) {
      // The same cell and weight as upsample() uses.
      const int lower = std::min(i / step, std::max(coarse_extent_of[axis] - 2, 0));
      const double u = coarse_extent_of[axis] > 1 ? static_cast<double>(i - lower * step) / step : 0.0;
      const double variance = (1.0 - u) * (1.0 - u) + u * u + 2.0 * u * (1.0 - u) * rho;
      correction[axis].push_back(static_cast<float>(1.0 / std::sqrt(variance)));
    }
  }

  std::array<FloatImage, 3> field;
  for (std::size_t axis = 0; axis < axes; ++axis) {
    FloatImage noise(coarse);
    for (float& value : noise.voxels()) value = random.normal_float();
    gaussian_filter(noise, sigma);
    const double node_scale = options.displacement_sd_mm / std::sqrt(gaussian_filter_noise_gain(noise, sigma));
    CoarseGrid grid{coarse.shape, step, std::move(noise.voxels())};
    field[axis] = upsample(grid, geometry);
    FloatImage& component = field[axis];
    for (int z = 0; z < geometry.shape.z; ++z)
      for (int y = 0; y < geometry.shape.y; ++y) {
        float* row = component.data() + component.index(0, y, z);
        const auto yz = static_cast<float>(node_scale * correction[1][static_cast<std::size_t>(y)] *
                                           correction[2][static_cast<std::size_t>(z)]);
        const float* along_x = correction[0].data();
        for (int x = 0; x < geometry.shape.x; ++x) row[x] *= yz * along_x[x];
      }
  }
  return field;
}

// Separable linear upsampling of a box's 0/1 mask by kFine per axis (not z in 2D): fine point j
// sits at voxel coordinate (j - (kFine - 1) / 2) / kFine, values beyond the box repeat its edge.
std::vector<float> upsample_mask(const std::vector<std::uint8_t>& mask, const Shape& coarse, const Shape& fine) {
  std::vector<float> current(mask.begin(), mask.end());
  int extent[3] = {coarse.x, coarse.y, coarse.z};
  const int fine_extent[3] = {fine.x, fine.y, fine.z};
  for (std::size_t axis = 0; axis < 3; ++axis) {
    const int n = extent[axis];
    if (fine_extent[axis] == n) continue;
    // Voxels before this axis (stride) and after it (rest) are the same in input and output.
    std::size_t stride = 1;
    for (std::size_t a = 0; a < axis; ++a) stride *= static_cast<std::size_t>(extent[a]);
    std::size_t rest = 1;
    for (std::size_t a = axis + 1; a < 3; ++a) rest *= static_cast<std::size_t>(extent[a]);
    const auto m = static_cast<std::size_t>(fine_extent[axis]);
    std::vector<float> out(stride * m * rest);
    for (std::size_t j = 0; j < m; ++j) {
      const double t = (static_cast<double>(j) - 0.5 * (kFine - 1)) / kFine;
      const int i0 = static_cast<int>(std::floor(t));
      const auto w = static_cast<float>(t - i0);
      const auto a = static_cast<std::size_t>(std::clamp(i0, 0, n - 1));
      const auto b = static_cast<std::size_t>(std::clamp(i0 + 1, 0, n - 1));
      for (std::size_t r = 0; r < rest; ++r) {
        const float* lower = current.data() + (r * static_cast<std::size_t>(n) + a) * stride;
        const float* upper = current.data() + (r * static_cast<std::size_t>(n) + b) * stride;
        float* target = out.data() + (r * m + j) * stride;
        for (std::size_t i = 0; i < stride; ++i) target[i] = lower[i] + w * (upper[i] - lower[i]);
      }
    }
    current = std::move(out);
    extent[axis] = fine_extent[axis];
  }
  return current;
}

// Signed distance in mm (negative inside) from every fine point of a box to the boundary of its
// mask, and the level that keeps the mask's area. The boundary is the 0.5 level of the mask
// interpolated linearly between voxel centres, found on the fine grid; distances come from the
// exact distance transform of that fine shape, less half a fine step (the boundary lies between
// fine points). Thresholding the interpolated field at `level` encloses, on average over
// sub-voxel positions, as many voxels as the mask holds (the level is solved for below), and at
// level + b the boundary moves out by b mm.
struct SignedDistance {
  Shape shape;  // fine grid
  std::array<double, 3> spacing_mm{};
  std::vector<float> distance_mm;  // x fastest
  double level = 0.0;
};

SignedDistance signed_distance(const std::vector<std::uint8_t>& mask, const Shape& coarse,
                               const std::array<double, 3>& spacing_mm) {
  const bool flat = coarse.z == 1;
  SignedDistance result;
  result.shape = {coarse.x * kFine, coarse.y * kFine, flat ? 1 : coarse.z * kFine};
  result.spacing_mm = {spacing_mm[0] / kFine, spacing_mm[1] / kFine, flat ? spacing_mm[2] : spacing_mm[2] / kFine};
  const std::vector<float> smooth = upsample_mask(mask, coarse, result.shape);
  std::vector<std::uint8_t> inside(smooth.size()), outside(smooth.size());
  for (std::size_t i = 0; i < smooth.size(); ++i) {
    inside[i] = smooth[i] >= 0.5F ? 1 : 0;
    outside[i] = 1 - inside[i];
  }
  const std::vector<double> to_inside = squared_distance_to_features_mm2(inside, result.shape, result.spacing_mm);
  const std::vector<double> to_outside = squared_distance_to_features_mm2(outside, result.shape, result.spacing_mm);
  const double step =
      std::min({result.spacing_mm[0], result.spacing_mm[1], flat ? result.spacing_mm[0] : result.spacing_mm[2]});
  result.distance_mm.resize(smooth.size());
  for (std::size_t i = 0; i < smooth.size(); ++i)
    result.distance_mm[i] = static_cast<float>(inside[i] != 0 ? -(std::sqrt(to_outside[i]) - 0.5 * step)
                                                              : std::sqrt(to_inside[i]) - 0.5 * step);

  // The area enclosed at level c, counted with a linear partial-volume ramp one fine step wide
  // (a fine point at distance d contributes clamp(0.5 + (c - d) / step, 0, 1)), is continuous and
  // increasing in c; bisection finds where it equals the mask's voxel count. Only points within
  // `band` of the boundary can change their share.
  std::size_t marked = 0;
  for (std::uint8_t m : mask) marked += m;
  const double target =
      static_cast<double>(marked) * static_cast<double>(smooth.size()) / static_cast<double>(mask.size());
  const double band = 2.0 * std::max({spacing_mm[0], spacing_mm[1], flat ? spacing_mm[0] : spacing_mm[2]});
  double fixed = 0.0;
  std::vector<float> near;
  for (float d : result.distance_mm) {
    if (d < -band)
      fixed += 1.0;
    else if (d <= band)
      near.push_back(d);
  }
  // 30 halvings of the bracket leave it a few nanometres wide.
  double low = -band + step, high = band - step;
  const double per_step = 1.0 / step;
  for (int iteration = 0; iteration < 30; ++iteration) {
    const double c = 0.5 * (low + high);
    double area = fixed;
    for (float d : near) area += std::clamp(0.5 + (c - d) * per_step, 0.0, 1.0);
    (area < target ? low : high) = c;
  }
  result.level = 0.5 * (low + high);
  return result;
}

// Linear interpolation of a fine grid at fine coordinates, repeating the edge beyond it.
float sample_linear(const SignedDistance& grid, double x, double y, double z) {
  const Shape& s = grid.shape;
  const auto corner = [](double t, int n, int& i0, int& i1, double& w) {
    t = std::clamp(t, 0.0, static_cast<double>(n - 1));
    i0 = static_cast<int>(std::floor(t));
    i1 = std::min(i0 + 1, n - 1);
    w = t - i0;
  };
  int x0, x1, y0, y1, z0, z1;
  double wx, wy, wz;
  corner(x, s.x, x0, x1, wx);
  corner(y, s.y, y0, y1, wy);
  corner(z, s.z, z0, z1, wz);
  const auto at = [&](int i, int j, int k) {
    return static_cast<double>(
        grid.distance_mm[(static_cast<std::size_t>(k) * static_cast<std::size_t>(s.y) + static_cast<std::size_t>(j)) *
                             static_cast<std::size_t>(s.x) +
                         static_cast<std::size_t>(i)]);
  };
  const double c00 = at(x0, y0, z0) + wx * (at(x1, y0, z0) - at(x0, y0, z0));
  const double c10 = at(x0, y1, z0) + wx * (at(x1, y1, z0) - at(x0, y1, z0));
  const double c01 = at(x0, y0, z1) + wx * (at(x1, y0, z1) - at(x0, y0, z1));
  const double c11 = at(x0, y1, z1) + wx * (at(x1, y1, z1) - at(x0, y1, z1));
  const double c0 = c00 + wy * (c10 - c00), c1 = c01 + wy * (c11 - c01);
  return static_cast<float>(c0 + wz * (c1 - c0));
}

// The deformed and biased outline of one object in its box: voxel p is inside when the signed
// distance, read at p moved by the displacement, is at most level + bias. The displacement moves
// the boundary smoothly; since each voxel's displacement is zero-mean and the level keeps the
// area, the expected area is the mask's (it does not depend on the field's smoothness).
std::vector<std::uint8_t> deform(const std::vector<std::uint8_t>& mask, const Box& box, const Geometry& geometry,
                                 const std::array<FloatImage, 3>& field, double bias_mm) {
  const Shape coarse = box.shape();
  const bool flat = coarse.z == 1;
  const SignedDistance sd = signed_distance(mask, coarse, geometry.spacing_mm);
  const double threshold = sd.level + bias_mm;
  const double centre = 0.5 * (kFine - 1);  // fine coordinate of voxel coordinate 0
  std::vector<std::uint8_t> out(mask.size(), 0);
  const auto displacement = [&](std::size_t axis, int x, int y, int z) {
    return field[axis].empty()
               ? 0.0
               : field[axis].at(box.low[0] + x, box.low[1] + y, box.low[2] + z) / geometry.spacing_mm[axis];
  };
  if (flat) {
    // cv::remap reads the fine signed distance at the displaced positions (bilinear).
    cv::Mat map_x(coarse.y, coarse.x, CV_32F), map_y(coarse.y, coarse.x, CV_32F);
    for (int y = 0; y < coarse.y; ++y)
      for (int x = 0; x < coarse.x; ++x) {
        map_x.at<float>(y, x) = static_cast<float>(kFine * (x + displacement(0, x, y, 0)) + centre);
        map_y.at<float>(y, x) = static_cast<float>(kFine * (y + displacement(1, x, y, 0)) + centre);
      }
    const cv::Mat distance(sd.shape.y, sd.shape.x, CV_32F, const_cast<float*>(sd.distance_mm.data()));
    cv::Mat sampled;
    cv::remap(distance, sampled, map_x, map_y, cv::INTER_LINEAR, cv::BORDER_REPLICATE);
    for (int y = 0; y < coarse.y; ++y)
      for (int x = 0; x < coarse.x; ++x) out[box.index(x, y, 0)] = sampled.at<float>(y, x) <= threshold ? 1 : 0;
    return out;
  }
  for (int z = 0; z < coarse.z; ++z)
    for (int y = 0; y < coarse.y; ++y)
      for (int x = 0; x < coarse.x; ++x) {
        const float value = sample_linear(sd, kFine * (x + displacement(0, x, y, z)) + centre,
                                          kFine * (y + displacement(1, x, y, z)) + centre,
                                          kFine * (z + displacement(2, x, y, z)) + centre);
        out[box.index(x, y, z)] = value <= threshold ? 1 : 0;
      }
  return out;
}

// Sets (value 1) or clears (value 0) the voxels of the box within radius_mm of `centre`.
void stamp_ball(std::vector<std::uint8_t>& mask, const Box& box, const Voxel& centre, double radius_mm,
                const std::array<double, 3>& spacing_mm, std::uint8_t value) {
  Voxel reach{};
  for (std::size_t axis = 0; axis < 3; ++axis)
    reach[axis] = box.size(axis) == 1 ? 0 : static_cast<int>(std::floor(radius_mm / spacing_mm[axis]));
  for (int z = std::max(0, centre[2] - reach[2]); z <= std::min(box.size(2) - 1, centre[2] + reach[2]); ++z)
    for (int y = std::max(0, centre[1] - reach[1]); y <= std::min(box.size(1) - 1, centre[1] + reach[1]); ++y)
      for (int x = std::max(0, centre[0] - reach[0]); x <= std::min(box.size(0) - 1, centre[0] + reach[0]); ++x) {
        const double dx = (x - centre[0]) * spacing_mm[0], dy = (y - centre[1]) * spacing_mm[1],
                     dz = (z - centre[2]) * spacing_mm[2];
        if (dx * dx + dy * dy + dz * dz <= radius_mm * radius_mm) mask[box.index(x, y, z)] = value;
      }
}

// Voxels of the box outside the mask with a face neighbour inside (where a protrusion attaches),
// or inside it (where a hole goes).
std::vector<Voxel> attachment_voxels(const std::vector<std::uint8_t>& mask, const Box& box, bool inside) {
  std::vector<Voxel> result;
  const Shape s = box.shape();
  for (int z = 0; z < s.z; ++z)
    for (int y = 0; y < s.y; ++y)
      for (int x = 0; x < s.x; ++x) {
        const bool set = mask[box.index(x, y, z)] != 0;
        if (inside) {
          if (set) result.push_back({x, y, z});
          continue;
        }
        if (set) continue;
        const int neighbours[6][3] = {{-1, 0, 0}, {1, 0, 0}, {0, -1, 0}, {0, 1, 0}, {0, 0, -1}, {0, 0, 1}};
        for (const auto& n : neighbours) {
          const int u = x + n[0], v = y + n[1], w = z + n[2];
          if (u < 0 || v < 0 || w < 0 || u >= s.x || v >= s.y || w >= s.z) continue;
          if (mask[box.index(u, v, w)] != 0) {
            result.push_back({x, y, z});
            break;
          }
        }
      }
  return result;
}

// Protrusions (balls centred just outside the outline) and holes (balls cleared inside it), each a
// Poisson number per lesion with the configured mean.
void add_protrusions_and_holes(std::vector<std::uint8_t>& mask, const Box& box, const OutlineOptions& options,
                               const std::array<double, 3>& spacing_mm, RandomStream& random) {
  const auto place = [&](double rate, bool inside, const double(&radius_mm)[2], std::uint8_t value) {
    const std::int64_t count = rate > 0.0 ? random.poisson(rate) : 0;
    for (std::int64_t n = 0; n < count; ++n) {
      const std::vector<Voxel> candidates = attachment_voxels(mask, box, inside);
      if (candidates.empty()) return;
      const Voxel at =
          candidates[static_cast<std::size_t>(random.uniform_int(0, static_cast<std::int64_t>(candidates.size()) - 1))];
      stamp_ball(mask, box, at, random.uniform(radius_mm[0], radius_mm[1]), spacing_mm, value);
    }
  };
  place(options.protrusion_rate, false, kProtrusionRadiusMm, 1);
  place(options.hole_rate, true, kHoleRadiusMm, 0);
}

// Spurious blobs: a Poisson number per image, each a ball centred on a random field voxel whose
// ball, widened by kSpuriousClearanceMm, holds no object voxel and no outline voxel; a blob that
// finds no such place in kSpuriousTries tries is dropped. Returns the number placed.
int add_spurious_blobs(LabelImage& outline, const LabelImage& labels, double rate, RandomStream& random) {
  const std::int64_t count = rate > 0.0 ? random.poisson(rate) : 0;
  const Geometry& geometry = labels.geometry();
  const Shape& shape = geometry.shape;
  const int extent[3] = {shape.x, shape.y, shape.z};
  int placed = 0;
  for (std::int64_t n = 0; n < count; ++n) {
    const double radius = random.uniform(kSpuriousRadiusMm[0], kSpuriousRadiusMm[1]);
    const double clear = radius + kSpuriousClearanceMm;
    for (int attempt = 0; attempt < kSpuriousTries; ++attempt) {
      const auto index = static_cast<std::size_t>(random.uniform_int(0, static_cast<std::int64_t>(labels.size()) - 1));
      if (labels.data()[index] != kField) continue;
      const Voxel centre = voxel_of(shape, index);
      bool free = true;
      Voxel reach{};
      for (std::size_t axis = 0; axis < 3; ++axis)
        reach[axis] = extent[axis] == 1 ? 0 : static_cast<int>(std::ceil(clear / geometry.spacing_mm[axis]));
      for (int z = std::max(0, centre[2] - reach[2]); free && z <= std::min(shape.z - 1, centre[2] + reach[2]); ++z)
        for (int y = std::max(0, centre[1] - reach[1]); free && y <= std::min(shape.y - 1, centre[1] + reach[1]); ++y)
          for (int x = std::max(0, centre[0] - reach[0]); free && x <= std::min(shape.x - 1, centre[0] + reach[0]);
               ++x) {
            const double dx = (x - centre[0]) * geometry.spacing_mm[0], dy = (y - centre[1]) * geometry.spacing_mm[1],
                         dz = (z - centre[2]) * geometry.spacing_mm[2];
            if (dx * dx + dy * dy + dz * dz > clear * clear) continue;
            free = labels.at(x, y, z) < kLesion && outline.at(x, y, z) == 0;
          }
      if (!free) continue;
      // The blob is clipped to the field: raters draw on what they take for tissue.
      for (int z = std::max(0, centre[2] - reach[2]); z <= std::min(shape.z - 1, centre[2] + reach[2]); ++z)
        for (int y = std::max(0, centre[1] - reach[1]); y <= std::min(shape.y - 1, centre[1] + reach[1]); ++y)
          for (int x = std::max(0, centre[0] - reach[0]); x <= std::min(shape.x - 1, centre[0] + reach[0]); ++x) {
            const double dx = (x - centre[0]) * geometry.spacing_mm[0], dy = (y - centre[1]) * geometry.spacing_mm[1],
                         dz = (z - centre[2]) * geometry.spacing_mm[2];
            if (dx * dx + dy * dy + dz * dz <= radius * radius && labels.at(x, y, z) >= kField) outline.at(x, y, z) = 1;
          }
      ++placed;
      break;
    }
  }
  return placed;
}

// Outlined boundary length in mm, as the rater's pen travels it: per slice, the length of every
// contour OpenCV traces through the boundary voxel centres (outer borders and holes; the 8-chain's
// diagonal steps make up for running half a voxel inside, so a disc of radius 5-20 voxels measures
// within 4% of 2 pi r), with the in-plane spacing applied. A lone voxel counts 0. A 3D mask sums
// its slices (raters outline volumes slice by slice).
double boundary_length_mm(const LabelImage& mask) {
  const Geometry& geometry = mask.geometry();
  double length = 0.0;
  for (int z = 0; z < mask.shape().z; ++z) {
    std::vector<std::vector<cv::Point>> contours;
    cv::findContours(slice_view(mask, z).clone(), contours, cv::RETR_LIST, cv::CHAIN_APPROX_NONE);
    for (const std::vector<cv::Point>& contour : contours) {
      std::vector<cv::Point2f> mm;
      mm.reserve(contour.size());
      for (const cv::Point& p : contour)
        mm.emplace_back(static_cast<float>(p.x * geometry.spacing_mm[0]),
                        static_cast<float>(p.y * geometry.spacing_mm[1]));
      length += cv::arcLength(mm, true);
    }
  }
  return length;
}

}  // namespace

Label make_outline(const Subject& subject, const RaterOptions& rater, RandomStream& random) {
  const OutlineOptions& options = rater.outline;
  const Geometry& geometry = subject.labels.geometry();
  const bool flat = geometry.shape.z == 1;
  const std::vector<bool> noticed = notice_objects(subject.truth, rater.detection, random);
  FRUGAL_CHECK(noticed.size() == subject.truth.objects.size());
  // Each kind of error draws from its own sub-stream, so changing one parameter (as calibration
  // does) leaves the other errors' random numbers in place.
  RandomStream field_random(random.next_u64());
  RandomStream shape_random(random.next_u64());
  RandomStream spurious_random(random.next_u64());

  std::vector<ObjectRegion> regions = object_regions(subject);
  regions.erase(std::remove_if(regions.begin(), regions.end(),
                               [&](const ObjectRegion& r) {
                                 return r.object >= 0 && !noticed[static_cast<std::size_t>(r.object)];
                               }),
                regions.end());

  Label label;
  label.kind = LabelKind::outline;
  label.mask = LabelImage(geometry, 0);
  const bool deformed = options.displacement_sd_mm > 0.0 || options.bias_mm != 0.0;
  std::array<FloatImage, 3> field;
  if (!regions.empty() && options.displacement_sd_mm > 0.0) field = displacement_field(geometry, options, field_random);
  // The box in which an object's outline is deformed reaches as far as the outline can go: the
  // bias, four SD of the displacement and a voxel to spare; protrusions and holes work in a box
  // wider by the largest protrusion.
  const double deform_reach_mm = std::max(options.bias_mm, 0.0) + 4.0 * options.displacement_sd_mm;
  const auto grow = [&](const Voxel& low, const Voxel& high, double reach_mm) {
    Box box;
    for (std::size_t axis = 0; axis < 3; ++axis) {
      const int extent = axis == 0 ? geometry.shape.x : axis == 1 ? geometry.shape.y : geometry.shape.z;
      const int margin =
          (flat && axis == 2) ? 0 : static_cast<int>(std::ceil(reach_mm / geometry.spacing_mm[axis])) + 1;
      box.low[axis] = std::max(0, low[axis] - margin);
      box.high[axis] = std::min(extent - 1, high[axis] + margin);
    }
    return box;
  };
  for (const ObjectRegion& region : regions) {
    const Box inner = grow(region.low, region.high, deform_reach_mm);
    std::vector<std::uint8_t> deformed_mask(inner.count(), 0);
    for (std::size_t index : region.voxels) {
      const Voxel v = voxel_of(geometry.shape, index);
      deformed_mask[inner.index(v[0] - inner.low[0], v[1] - inner.low[1], v[2] - inner.low[2])] = 1;
    }
    // Without displacement or bias the outline is the truth mask itself, voxel for voxel.
    if (deformed) deformed_mask = deform(deformed_mask, inner, geometry, field, options.bias_mm);
    const Box box = grow(inner.low, inner.high, kProtrusionRadiusMm[1]);
    std::vector<std::uint8_t> mask(box.count(), 0);
    for (int z = 0; z < inner.size(2); ++z)
      for (int y = 0; y < inner.size(1); ++y)
        for (int x = 0; x < inner.size(0); ++x)
          mask[box.index(inner.low[0] - box.low[0] + x, inner.low[1] - box.low[1] + y, inner.low[2] - box.low[2] + z)] =
              deformed_mask[inner.index(x, y, z)];
    add_protrusions_and_holes(mask, box, options, geometry.spacing_mm, shape_random);
    for (int z = 0; z < box.size(2); ++z)
      for (int y = 0; y < box.size(1); ++y)
        for (int x = 0; x < box.size(0); ++x)
          if (mask[box.index(x, y, z)] != 0) label.mask.at(box.low[0] + x, box.low[1] + y, box.low[2] + z) = 1;
  }
  const int spurious = add_spurious_blobs(label.mask, subject.labels, options.spurious_rate, spurious_random);

  // Every outlined object is paid for, spurious blobs included (the rater drew them too).
  const double outlined = static_cast<double>(regions.size()) + spurious;
  label.cost_seconds = rater.cost.outline_per_image_s + rater.cost.outline_per_lesion_s * outlined +
                       rater.cost.outline_per_boundary_mm_s * boundary_length_mm(label.mask);
  return label;
}

}  // namespace frugal
