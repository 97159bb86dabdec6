#pragma once
// The steps every family shares after drawing a subject at rest: the rescan pose, the labels and
// object statistics read back from the instance map, partial-volume blur, gain and noise.

#include <cstdint>
#include <vector>

#include "phantoms/image.h"
#include "phantoms/object_rendering.h"
#include "phantoms/pose.h"
#include "phantoms/random.h"
#include "phantoms/scenario.h"
#include "phantoms/subject.h"

namespace frugal {

// An analytic object waiting to be drawn; its id is its 1-based place in truth.objects.
struct ObjectShape {
  bool is_capsule = false;
  bool is_tube = false;
  Spheroid spheroid;
  Capsule capsule;
  Tube tube;
  float shown_contrast = 0.0F;  // contrast times the bias field at the centre
  bool clip_to_field = false;
};

// A subject before acquisition, in subject space (world of the rest pose).
struct RestSubject {
  FloatImage signal;       // noiseless, sharp background (objects are drawn after the pose)
  LabelImage field;        // 1 inside the field, 0 outside
  InstanceImage instances; // object id per voxel (0 = none); voids: 1 marks the region
  std::vector<ObjectShape> shapes;
  SubjectTruth truth;      // objects in subject space; scalar truth filled by the family
};

// The nuisance factor of one subject and how it acts on the image.
struct Confounder {
  double value = 1.0;        // what truth records: the size factor, the gain, or the HU shift
  double size_factor = 1.0;  // scales the field (head or lungs)
  double gain = 1.0;         // multiplies the signal at acquisition (streaks)
  double shift_hu = 0.0;     // shifts the parenchyma (voids)
};

// Size factors stay within these bounds so the field stays inside the image; validate() keeps
// confounder.spread small enough (<= 0.1) that the bounds sit at least 3 SD away.
constexpr double kMinSizeFactor = 0.7;
constexpr double kMaxSizeFactor = 1.3;

// Draws the factor so that its correlation with the target is options.correlation:
// z = rho * standardised_target + sqrt(1 - rho^2) * e; size and gain are 1 + spread * z, a voids
// intensity shift is spread * z HU. Without a factor the value is 1 (streaks) or 0 HU (voids).
Confounder draw_confounder(const ConfounderOptions& options, Family family, double target, double target_mean,
                           double target_sd, RandomStream& random);

// The pose of rescan `rescan` (identity for 0).
RigidPose rescan_pose(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan);
// Moves a rest subject into `pose`: the smooth background and the field are resampled, the object
// records and shapes are moved exactly, and the objects are then drawn with partial-volume edges
// in the new pose, so a rescan is as sharp as the first scan.
void pose_and_draw_objects(RestSubject& rest, const RigidPose& pose, float outside_value);

// Label image from field and instances, and per-object mask volumes, reference-slice flags,
// count, count in the reference slice, affected fraction and field volume.
LabelImage finish_truth(const RestSubject& rest, SubjectTruth& truth, int reference_slice);

// PSF blur, gain and noise, in that order.
void acquire(FloatImage& signal, const ScenarioOptions& scenario, double gain, RandomStream& noise);

}  // namespace frugal
