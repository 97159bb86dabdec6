#include "phantoms/acquisition.h"

#include <algorithm>
#include <cmath>

#include "phantoms/image_ops.h"
#include "phantoms/noise.h"

namespace frugal {

double draw_confounder_score(const ConfounderOptions& options, double target, double target_mean,
                             double target_sd, RandomStream& random) {
  const double standardised = target_sd > 0.0 ? (target - target_mean) / target_sd : 0.0;
  const double rho = options.correlation;
  return rho * standardised + std::sqrt(std::max(0.0, 1.0 - rho * rho)) * random.normal();
}

RigidPose rescan_pose(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan) {
  if (rescan == 0) return RigidPose{};
  RandomStream random(seed, static_cast<std::uint64_t>(subject), StreamPurpose::pose, static_cast<std::uint64_t>(rescan));
  return draw_pose(scenario.rescan, scenario.geometry.dims, random);
}

void apply_pose(RestSubject& rest, const RigidPose& pose, float outside_value) {
  if (pose.is_identity()) return;
  rest.signal = resample_linear(rest.signal, pose, outside_value);
  rest.field = resample_nearest(rest.field, pose);
  rest.instances = resample_nearest(rest.instances, pose);
  for (ObjectRecord& object : rest.truth.objects) {
    object.centre_mm = pose.apply(object.centre_mm);
    object.direction = pose.rotate(object.direction);
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
