#include "phantoms/voids.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "phantoms/acquisition.h"
#include "phantoms/image_ops.h"
#include "phantoms/noise.h"
#include "phantoms/user_error.h"
#include "phantoms/vessel_tree.h"

namespace frugal {

namespace {

using Vec = std::array<double, 3>;

constexpr float kAirHu = -1000.0F;
constexpr float kScannerFloorHu = -1024.0F;  // lowest value a CT image stores
constexpr double kVoidTexture = 0.3;         // share of the parenchymal texture kept inside voids
// Densitometry-matched subjects must land this close to their target (about a voxel in 64^2).
constexpr double kDensitometryTolerance = 0.005;

struct Ellipsoid {
  Vec centre{}, semi_axes{};
  double radius_squared(const Vec& p, bool flat) const {
    const double x = (p[0] - centre[0]) / semi_axes[0], y = (p[1] - centre[1]) / semi_axes[1];
    const double z = flat ? 0.0 : (p[2] - centre[2]) / semi_axes[2];
    return x * x + y * y + z * z;
  }
};

// Everything about a subject that stays fixed while its low-density region is sized.
struct Anatomy {
  Geometry geometry;
  bool flat = true;
  Ellipsoid body;
  Ellipsoid lungs[2];
  LabelImage field;            // 1 inside a lung
  FloatImage texture;          // zero-mean parenchymal texture in HU
  FloatImage lung_radius;      // normalised radius within its own lung, for the peripheral band
  std::vector<std::size_t> field_voxels;
  double parenchyma_hu = -850.0;
  // The vessel and airway tree (voids.tree), when there is one. The low-density region is painted
  // only on the parenchyma (field voxels whose centre is in no branch): airways and vessels are
  // lung, not disease, so the truth's affected fraction leaves them out.
  bool has_tree = false;
  LungTree tree;
  TreeRaster tree_raster;
  LabelImage parenchyma;                     // 1 where the region may go
  std::vector<std::size_t> parenchyma_voxels;

  const LabelImage& paintable() const { return has_tree ? parenchyma : field; }
  const std::vector<std::size_t>& paintable_voxels() const { return has_tree ? parenchyma_voxels : field_voxels; }
};

FloatImage smooth_noise(const Geometry& geometry, double scale_mm, RandomStream& random) {
  FloatImage field(geometry);
  float* values = field.data();
  std::size_t i = 0;
  for (; i + 1 < field.size(); i += 2) random.normal_pair(values[i], values[i + 1]);
  if (i < field.size()) {
    float spare = 0.0F;
    random.normal_pair(values[i], spare);
  }
  const std::array<double, 3> sigma{scale_mm, scale_mm, scale_mm};
  const double gain = gaussian_filter_noise_gain(field, sigma);
  gaussian_filter(field, sigma);
  const auto unit = static_cast<float>(1.0 / std::sqrt(gain));  // unit variance
  for (float& value : field.voxels()) value *= unit;
  return field;
}

// A broad smooth field (scale several voxels): white noise on a coarse grid, filtered there and
// upsampled, which costs a fraction of filtering at full resolution. Scaled to unit SD.
FloatImage broad_smooth_noise(const Geometry& geometry, double scale_mm, RandomStream& random) {
  const double finest_spacing = std::min({geometry.spacing_mm[0], geometry.spacing_mm[1], geometry.spacing_mm[2]});
  const int step = std::max(1, static_cast<int>(scale_mm / (2.0 * finest_spacing)));
  Geometry coarse = centred_geometry(coarse_extent(geometry.shape, step), geometry.spacing_mm);
  for (double& spacing : coarse.spacing_mm) spacing *= step;
  const FloatImage coarse_field = smooth_noise(coarse, scale_mm, random);
  FloatImage field = upsample(CoarseGrid{coarse.shape, step, coarse_field.voxels()}, geometry);
  double sum = 0.0, sum2 = 0.0;
  for (float v : field.voxels()) {
    sum += v;
    sum2 += static_cast<double>(v) * v;
  }
  const double n = static_cast<double>(field.size());
  const double sd = std::sqrt(std::max(sum2 / n - (sum / n) * (sum / n), 1e-12));
  const auto mean = static_cast<float>(sum / n), unit = static_cast<float>(1.0 / sd);
  for (float& v : field.voxels()) v = (v - mean) * unit;
  return field;
}

Anatomy draw_anatomy(const ScenarioOptions& scenario, const Shape& shape, double size_factor, double shift_hu,
                     RandomStream& random) {
  Anatomy a;
  a.flat = shape.z == 1;
  a.geometry = centred_geometry(shape, scenario.geometry.spacing_mm);
  // The frame the chest is drawn in: the image's extent, or (physical scale) the extent whose
  // body ellipse (47%, 40%, 48% of it as semi-axes) has the full size anatomy_size_mm.
  const Vec& size_mm = scenario.geometry.anatomy_size_mm;
  const Vec extent = scenario.geometry.anatomy_scale == AnatomyScale::physical
                         ? Vec{size_mm[0] / 0.94, size_mm[1] / 0.80, size_mm[2] / 0.96}
                         : Vec{shape.x * a.geometry.spacing_mm[0], shape.y * a.geometry.spacing_mm[1],
                               shape.z * a.geometry.spacing_mm[2]};
  a.body.semi_axes = {0.47 * extent[0], 0.40 * extent[1], 0.48 * extent[2]};
  for (int side = 0; side < 2; ++side) {
    Ellipsoid& lung = a.lungs[side];
    const double jitter = random.uniform(0.9, 1.0) * size_factor;
    lung.centre = {(side == 0 ? -1.0 : 1.0) * 0.22 * extent[0], random.uniform(-0.02, 0.02) * extent[1], 0.0};
    lung.semi_axes = {0.17 * extent[0] * jitter, 0.30 * extent[1] * jitter, 0.36 * extent[2] * jitter};  // x kMaxSizeFactor stays in the body
  }
  a.parenchyma_hu = scenario.voids.parenchyma_hu + shift_hu;
  a.texture = smooth_noise(a.geometry, scenario.voids.texture_scale_mm, random);
  for (float& value : a.texture.voxels()) value *= static_cast<float>(scenario.voids.texture_sd_hu);
  a.field = LabelImage(a.geometry, 0);
  a.lung_radius = FloatImage(a.geometry, 2.0F);
  for (int k = 0; k < shape.z; ++k)
    for (int j = 0; j < shape.y; ++j)
      for (int i = 0; i < shape.x; ++i) {
        const Vec p = a.geometry.world_mm(i, j, k);
        const double r2 = std::min(a.lungs[0].radius_squared(p, a.flat), a.lungs[1].radius_squared(p, a.flat));
        if (r2 > 1.0) continue;
        a.field.at(i, j, k) = 1;
        a.lung_radius.at(i, j, k) = static_cast<float>(std::sqrt(r2));
        a.field_voxels.push_back(a.field.index(i, j, k));
      }
  return a;
}

void add_tree(const TreeOptions& options, RandomStream& random, Anatomy& a) {
  LungOutline lungs[2];
  for (int side = 0; side < 2; ++side) lungs[side] = {a.lungs[side].centre, a.lungs[side].semi_axes};
  a.tree = grow_lung_tree(options, lungs, a.flat, random);
  a.tree_raster = rasterise_tree(a.tree, a.geometry, a.field);
  a.has_tree = true;
  a.parenchyma = a.field;
  for (std::size_t n : a.field_voxels) {
    if (a.tree_raster.where.data()[n] != kNoTree)
      a.parenchyma.data()[n] = 0;
    else
      a.parenchyma_voxels.push_back(n);
  }
}

// Paints balls of random radius at random field positions until `target` of the field is covered.
int paint_balls(const Anatomy& a, double target, double min_radius_mm, double max_radius_mm,
                RandomStream& random, InstanceImage& region) {
  // The extent is a share of the whole field; the region covers only paintable voxels.
  const std::vector<std::size_t>& seeds = a.paintable_voxels();
  const LabelImage& paintable = a.paintable();
  const auto wanted = std::min(static_cast<std::int64_t>(std::ceil(target * static_cast<double>(a.field_voxels.size()))),
                               static_cast<std::int64_t>(seeds.size()));
  std::int64_t covered = 0;
  int balls = 0, painted = 0;  // drawn, and those that added voxels
  const Geometry& g = a.geometry;
  while (covered < wanted && balls < 100000) {
    const std::size_t seed_voxel =
        seeds[static_cast<std::size_t>(random.uniform_int(0, static_cast<std::int64_t>(seeds.size()) - 1))];
    const double radius = random.uniform(min_radius_mm, max_radius_mm);
    const int plane = g.shape.x * g.shape.y;
    const int ck = static_cast<int>(seed_voxel / static_cast<std::size_t>(plane));
    const int cj = static_cast<int>((seed_voxel % static_cast<std::size_t>(plane)) / static_cast<std::size_t>(g.shape.x));
    const int ci = static_cast<int>(seed_voxel % static_cast<std::size_t>(g.shape.x));
    const int ri = static_cast<int>(std::ceil(radius / g.spacing_mm[0]));
    const int rj = static_cast<int>(std::ceil(radius / g.spacing_mm[1]));
    const int rk = a.flat ? 0 : static_cast<int>(std::ceil(radius / g.spacing_mm[2]));
    // New voxels of this ball, nearest first: if the ball would overshoot, keeping only the
    // nearest ones is a smaller concentric ball, so the region reaches the target exactly.
    std::vector<std::pair<double, std::size_t>> fresh;
    for (int k = std::max(0, ck - rk); k <= std::min(g.shape.z - 1, ck + rk); ++k)
      for (int j = std::max(0, cj - rj); j <= std::min(g.shape.y - 1, cj + rj); ++j)
        for (int i = std::max(0, ci - ri); i <= std::min(g.shape.x - 1, ci + ri); ++i) {
          const double dx = (i - ci) * g.spacing_mm[0], dy = (j - cj) * g.spacing_mm[1], dz = (k - ck) * g.spacing_mm[2];
          const double distance2 = dx * dx + dy * dy + dz * dz;
          if (distance2 > radius * radius) continue;
          const std::size_t n = region.index(i, j, k);
          if (paintable.data()[n] == 0 || region.data()[n] != 0) continue;
          fresh.emplace_back(distance2, n);
        }
    const auto missing = static_cast<std::size_t>(wanted - covered);
    if (fresh.size() > missing) {
      std::sort(fresh.begin(), fresh.end());
      fresh.resize(missing);
    }
    for (const auto& entry : fresh) region.data()[entry.second] = 1;
    covered += static_cast<std::int64_t>(fresh.size());
    if (!fresh.empty()) ++painted;
    ++balls;
  }
  return painted;
}

// Marks the `target` share of field voxels with the highest score.
void mark_top_share(const Anatomy& a, const FloatImage& score, double target, InstanceImage& region) {
  const std::vector<std::size_t>& candidates = a.paintable_voxels();
  const auto wanted = std::min(static_cast<std::size_t>(std::llround(target * static_cast<double>(a.field_voxels.size()))),
                               candidates.size());
  if (wanted == 0) return;
  std::vector<std::pair<float, std::size_t>> ranked;
  ranked.reserve(candidates.size());
  for (std::size_t v : candidates) ranked.emplace_back(score.data()[v], v);
  // Ties are broken by voxel index, so the region is exactly the requested size.
  std::nth_element(ranked.begin(), ranked.begin() + static_cast<std::ptrdiff_t>(wanted - 1), ranked.end(),
                   [](const auto& x, const auto& y) { return x.first > y.first || (x.first == y.first && x.second < y.second); });
  for (std::size_t n = 0; n < wanted; ++n) region.data()[ranked[n].second] = 1;
}

struct PatternFields {
  FloatImage diffuse;  // broad smooth field for diffuse thinning
  FloatImage band;     // lung radius with a mild wobble for the peripheral band
};

// The region for a given extent; the same `random` state gives nested regions as target grows.
int build_region(const Anatomy& a, VoidPattern pattern, double target, const PatternFields& fields,
                 RandomStream random, InstanceImage& region) {
  std::fill(region.voxels().begin(), region.voxels().end(), 0);
  const double lung_scale = std::min(a.lungs[0].semi_axes[0], a.lungs[0].semi_axes[1]);
  switch (pattern) {
    case VoidPattern::scattered_holes:
      return paint_balls(a, target, 1.0, 2.5, random, region);
    case VoidPattern::confluent_spaces:
      return paint_balls(a, target, 0.15 * lung_scale, 0.35 * lung_scale, random, region);
    case VoidPattern::diffuse_thinning:
      mark_top_share(a, fields.diffuse, target, region);
      return 0;
    case VoidPattern::peripheral_band:
      mark_top_share(a, fields.band, target, region);
      return 0;
  }
  return 0;
}

// The noiseless image in the pose of a scan: field, region and texture already moved into it;
// the body outline is evaluated analytically. Drawing after the pose keeps the region edges as
// sharp in a rescan as in the first scan.
FloatImage render_signal(const Anatomy& a, const VoidsOptions& v, VoidPattern pattern, const LabelImage& field,
                         const InstanceImage& region, const FloatImage& texture, const RigidPose& pose,
                         const TreeRaster* tree) {
  FloatImage signal(a.geometry, kAirHu);
  const float void_hu = static_cast<float>(v.void_hu.at(pattern));
  for (int k = 0; k < a.geometry.shape.z; ++k)
    for (int j = 0; j < a.geometry.shape.y; ++j)
      for (int i = 0; i < a.geometry.shape.x; ++i) {
        const std::size_t n = signal.index(i, j, k);
        if (field.data()[n] != 0) {
          const float t = texture.data()[n];
          signal.data()[n] = region.data()[n] != 0 ? void_hu + static_cast<float>(kVoidTexture) * t
                                                   : static_cast<float>(a.parenchyma_hu) + t;
          if (tree != nullptr) {
            // Partial volume: air in the lumen, soft tissue in vessels and walls, the rest as drawn.
            const float air = tree->air.data()[n], tissue = std::max(tree->tissue.data()[n], air);
            signal.data()[n] = air * kAirHu + (tissue - air) * static_cast<float>(v.tree.vessel_hu) +
                               (1.0F - tissue) * signal.data()[n];
          }
        } else if (a.body.radius_squared(pose.inverse(a.geometry.world_mm(i, j, k)), a.flat) <= 1.0) {
          signal.data()[n] = static_cast<float>(v.body_hu);
        }
      }
  return signal;
}

// The tree's volume in the field of the scan it was drawn for, by the same partial-volume shares
// the image is drawn with.
void record_tree_volume(const TreeRaster& tree, SubjectTruth& truth) {
  double tissue = 0.0, air = 0.0;
  for (std::size_t n = 0; n < tree.tissue.size(); ++n) {
    air += tree.air.data()[n];
    tissue += std::max(tree.tissue.data()[n], tree.air.data()[n]);
  }
  const double voxel_volume = tree.tissue.geometry().voxel_volume_mm3();
  truth.tree_volume_mm3 = tissue * voxel_volume;
  truth.tree_air_volume_mm3 = air * voxel_volume;
}

}  // namespace

double densitometry(const FloatImage& image, const LabelImage& labels, double threshold_hu) {
  std::int64_t field = 0, below = 0;
  const auto threshold = static_cast<float>(threshold_hu);
  for (std::size_t v = 0; v < image.size(); ++v) {
    if (labels.data()[v] < kField) continue;
    ++field;
    below += image.data()[v] < threshold ? 1 : 0;
  }
  return field > 0 ? static_cast<double>(below) / static_cast<double>(field) : 0.0;
}

Subject generate_voids(const ScenarioOptions& scenario, std::uint64_t seed, int subject_index, int rescan) {
  const VoidsOptions& v = scenario.voids;
  const auto subject = static_cast<std::uint64_t>(subject_index);
  RandomStream anatomy_random(seed, subject, StreamPurpose::anatomy);
  RandomStream pattern_random(seed, subject, StreamPurpose::pattern);
  RandomStream nuisance(seed, subject, StreamPurpose::confounder);

  const bool flat = scenario.geometry.dims == 2;
  const Shape shape = flat ? Shape{scenario.geometry.size_2d[0], scenario.geometry.size_2d[1], 1}
                           : Shape{scenario.geometry.size_3d[0], scenario.geometry.size_3d[1], scenario.geometry.size_3d[2]};

  const VoidPattern pattern =
      v.patterns[static_cast<std::size_t>(pattern_random.uniform_int(0, static_cast<std::int64_t>(v.patterns.size()) - 1))];
  const double target = v.target.sample(pattern_random);
  const Confounder confounder =
      draw_confounder(scenario.confounder, Family::voids, target, v.target.expected(), v.target.spread(), nuisance);
  Anatomy anatomy = draw_anatomy(scenario, shape, confounder.size_factor, confounder.shift_hu, anatomy_random);
  if (v.tree.generations > 0) {
    RandomStream tree_random(seed, subject, StreamPurpose::anatomy, 1);  // its own stream: nothing else shifts
    add_tree(v.tree, tree_random, anatomy);
  }
  // Only the chosen pattern's field is drawn; each from its own stream, so the choice of pattern
  // does not shift any other random number.
  PatternFields fields;
  if (pattern == VoidPattern::diffuse_thinning) {
    RandomStream diffuse_random(seed, subject, StreamPurpose::pattern, 1);
    fields.diffuse = broad_smooth_noise(anatomy.geometry, 6.0, diffuse_random);
  } else if (pattern == VoidPattern::peripheral_band) {
    RandomStream band_random(seed, subject, StreamPurpose::pattern, 2);
    const FloatImage wobble = broad_smooth_noise(anatomy.geometry, 8.0, band_random);
    fields.band = anatomy.lung_radius;
    for (std::size_t n = 0; n < fields.band.size(); ++n) fields.band.data()[n] += 0.04F * wobble.data()[n];
  }

  InstanceImage region(anatomy.geometry, 0);
  const RandomStream region_random = pattern_random;  // common random numbers while sizing
  const auto acquire_with = [&](double extent, int for_rescan, RestSubject& rest) {
    rest.truth.count = build_region(anatomy, pattern, extent, fields, region_random, region);
    const RigidPose pose = rescan_pose(scenario, seed, subject_index, for_rescan);
    if (pose.is_identity()) {
      rest.field = anatomy.field;
      rest.instances = region;
      rest.signal = render_signal(anatomy, v, pattern, rest.field, rest.instances, anatomy.texture, pose,
                                  anatomy.has_tree ? &anatomy.tree_raster : nullptr);
      if (anatomy.has_tree) record_tree_volume(anatomy.tree_raster, rest.truth);
    } else {
      rest.field = resample_nearest(anatomy.field, pose);
      rest.instances = resample_nearest(region, pose);
      const FloatImage texture = resample_linear(anatomy.texture, pose, 0.0F);  // smooth, so linear is faithful
      if (anatomy.has_tree) {
        // The tree is drawn again in the new pose (sharp, like the first scan), and the moved
        // region gives up the voxels the moved tree now holds.
        const TreeRaster moved = rasterise_tree(anatomy.tree.moved(pose), anatomy.geometry, rest.field);
        for (std::size_t n = 0; n < rest.instances.size(); ++n)
          if (moved.where.data()[n] != kNoTree) rest.instances.data()[n] = 0;
        rest.signal = render_signal(anatomy, v, pattern, rest.field, rest.instances, texture, pose, &moved);
        record_tree_volume(moved, rest.truth);
      } else {
        rest.signal = render_signal(anatomy, v, pattern, rest.field, rest.instances, texture, pose, nullptr);
      }
    }
    RandomStream noise(seed, subject, StreamPurpose::noise, static_cast<std::uint64_t>(for_rescan));
    acquire(rest.signal, scenario, 1.0, noise);
    for (float& value : rest.signal.voxels()) value = std::max(value, kScannerFloorHu);
  };

  double extent = target;
  if (v.target_kind == VoidsTarget::densitometry) {
    // Bisection on the extent of the region until the first acquisition's densitometry matches
    // the target; rescans reuse that extent (same anatomy and region).
    double low = 0.0, high = 0.95;
    for (int iteration = 0; iteration < 16; ++iteration) {
      const double middle = 0.5 * (low + high);
      RestSubject trial;
      acquire_with(middle, 0, trial);
      (densitometry(trial.signal, trial.field, v.threshold_hu) < target ? low : high) = middle;
    }
    extent = 0.5 * (low + high);
    RestSubject check;
    acquire_with(extent, 0, check);
    const double reached = densitometry(check.signal, check.field, v.threshold_hu);
    if (std::abs(reached - target) > kDensitometryTolerance) {
      RestSubject none, most;
      acquire_with(0.0, 0, none);
      acquire_with(0.95, 0, most);
      char message[512];
      std::snprintf(message, sizeof(message),
                    "subject %d: the densitometry target %g cannot be reached with the %s pattern: this subject "
                    "reaches %g (no region) to %g (95%% of the field); keep voids.target within that range, or make "
                    "voids.void_hu.%s darker to reach higher values",
                    subject_index, target, to_string(pattern).c_str(), densitometry(none.signal, none.field, v.threshold_hu),
                    densitometry(most.signal, most.field, v.threshold_hu), to_string(pattern).c_str());
      throw UserError(message);
    }
  }

  RestSubject rest;
  acquire_with(extent, rescan, rest);
  Subject result;
  rest.truth.family = Family::voids;
  rest.truth.subject = subject_index;
  rest.truth.rescan = rescan;
  rest.truth.pattern = to_string(pattern);
  rest.truth.confounder = confounder.value;
  rest.truth.target = target;
  const int reference_slice = flat ? 0 : (scenario.geometry.reference_slice >= 0 ? scenario.geometry.reference_slice : shape.z / 2);
  result.labels = finish_truth(rest, rest.truth, reference_slice);
  result.truth = rest.truth;
  result.truth.burden_mm3 = result.truth.affected_fraction * result.truth.field_volume_mm3;
  result.truth.count_reference_slice = 0;
  result.truth.densitometry = densitometry(rest.signal, result.labels, v.threshold_hu);
  result.image = std::move(rest.signal);
  return result;
}

}  // namespace frugal
