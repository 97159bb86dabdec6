#include "phantoms/acquisition.h"

#include <algorithm>
#include <cmath>

#include "phantoms/image_ops.h"
#include "phantoms/noise.h"

namespace frugal {

Confounder draw_confounder(const ConfounderOptions& options, Family family, double target, double target_mean,
                           double target_sd, RandomStream& random) {
  const double standardised = target_sd > 0.0 ? (target - target_mean) / target_sd : 0.0;
  const double rho = options.correlation;
  const double score = rho * standardised + std::sqrt(std::max(0.0, 1.0 - rho * rho)) * random.normal();
  Confounder confounder;
  switch (options.factor) {
    case ConfounderFactor::none:
      confounder.value = family == Family::voids ? 0.0 : 1.0;
      break;
    case ConfounderFactor::field_size:
      confounder.size_factor = std::clamp(1.0 + options.spread * score, kMinSizeFactor, kMaxSizeFactor);
      confounder.value = confounder.size_factor;
      break;
    case ConfounderFactor::global_intensity:
      if (family == Family::voids) {
        confounder.shift_hu = options.spread * score;  // e.g. a different inspiration level
        confounder.value = confounder.shift_hu;
      } else {
        confounder.gain = std::max(0.05, 1.0 + options.spread * score);
        confounder.value = confounder.gain;
      }
      break;
  }
  return confounder;
}

RigidPose rescan_pose(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan) {
  if (rescan == 0) return RigidPose{};
  RandomStream random(seed, static_cast<std::uint64_t>(subject), StreamPurpose::pose, static_cast<std::uint64_t>(rescan));
  return draw_pose(scenario.rescan, scenario.geometry.dims, random);
}

void pose_and_draw_objects(RestSubject& rest, const RigidPose& pose, float outside_value) {
  FRUGAL_CHECK(rest.shapes.size() == rest.truth.objects.size());
  if (!pose.is_identity()) {
    rest.signal = resample_linear(rest.signal, pose, outside_value);
    rest.field = resample_nearest(rest.field, pose);
    rest.instances = resample_nearest(rest.instances, pose);
    for (ObjectRecord& object : rest.truth.objects) {
      object.centre_mm = pose.apply(object.centre_mm);
      object.direction = pose.rotate(object.direction);
    }
    for (ObjectShape& shape : rest.shapes) {
      shape.spheroid.centre_mm = pose.apply(shape.spheroid.centre_mm);
      shape.spheroid.direction = pose.rotate(shape.spheroid.direction);
      shape.capsule.centre_mm = pose.apply(shape.capsule.centre_mm);
      shape.capsule.direction = pose.rotate(shape.capsule.direction);
      if (shape.is_tube) shape.tube = shape.tube.moved(pose);
    }
  }
  for (std::size_t n = 0; n < rest.shapes.size(); ++n) {
    const ObjectShape& shape = rest.shapes[n];
    const auto id = static_cast<std::uint16_t>(n + 1);
    const LabelImage* allowed = shape.clip_to_field ? &rest.field : nullptr;
    if (shape.is_tube)
      render(shape.tube, shape.shown_contrast, id, rest.signal, rest.instances, allowed);
    else if (shape.is_capsule)
      render(shape.capsule, shape.shown_contrast, id, rest.signal, rest.instances, allowed);
    else
      render(shape.spheroid, shape.shown_contrast, id, rest.signal, rest.instances, allowed);
  }
}

LabelImage finish_truth(const RestSubject& rest, SubjectTruth& truth, int reference_slice) {
  LabelImage labels(rest.field.geometry(), kOutside);
  const std::size_t count = labels.size();
  std::vector<std::int64_t> voxels_per_object(truth.objects.size() + 2, 0);
  std::vector<bool> in_slice(truth.objects.size() + 2, false);
  const std::size_t plane = static_cast<std::size_t>(labels.shape().x) * static_cast<std::size_t>(labels.shape().y);
  std::int64_t field_voxels = 0, lesion_voxels = 0;
  for (std::size_t v = 0; v < count; ++v) {
    if (rest.field.data()[v] == 0) continue;
    ++field_voxels;
    const std::uint16_t id = rest.instances.data()[v];
    std::uint8_t code = kField;
    if (id > 0) {
      const ObjectKind kind = truth.objects.empty() ? ObjectKind::lesion : truth.objects[id - 1U].kind;
      code = kind == ObjectKind::lesion ? kLesion : kind == ObjectKind::dot_distractor ? kDotDistractor : kLineDistractor;
      if (id < voxels_per_object.size()) {
        ++voxels_per_object[id];
        if (static_cast<int>(v / plane) == reference_slice) in_slice[id] = true;
      }
    }
    if (code == kLesion) ++lesion_voxels;
    labels.data()[v] = code;
  }
  const double voxel_volume = labels.geometry().voxel_volume_mm3();
  truth.reference_slice = reference_slice;
  truth.field_volume_mm3 = static_cast<double>(field_voxels) * voxel_volume;
  truth.affected_fraction = field_voxels > 0 ? static_cast<double>(lesion_voxels) / static_cast<double>(field_voxels) : 0.0;
  if (!truth.objects.empty()) {
    truth.count = 0;
    truth.count_reference_slice = 0;
    truth.burden_mm3 = 0.0;
  }
  for (ObjectRecord& object : truth.objects) {
    const auto id = static_cast<std::size_t>(object.id);
    object.mask_volume_mm3 = static_cast<double>(voxels_per_object[id]) * voxel_volume;
    object.in_reference_slice = in_slice[id];
    if (object.kind != ObjectKind::lesion) continue;
    ++truth.count;
    truth.burden_mm3 += object.volume_mm3;
    if (object.in_reference_slice) ++truth.count_reference_slice;
  }
  return labels;
}

void acquire(FloatImage& signal, const ScenarioOptions& scenario, double gain, RandomStream& noise) {
  if (scenario.psf_fwhm_mm > 0.0) {
    const double sigma = scenario.psf_fwhm_mm / (2.0 * std::sqrt(2.0 * std::log(2.0)));  // FWHM = 2.3548 sigma
    gaussian_filter(signal, {sigma, sigma, sigma});
  }
  if (gain != 1.0) {
    const auto factor = static_cast<float>(gain);
    for (float& value : signal.voxels()) value *= factor;
  }
  add_noise(signal, scenario.noise, noise);
}

}  // namespace frugal
