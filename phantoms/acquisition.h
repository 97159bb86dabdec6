#pragma once
// The steps every family shares after drawing a subject at rest: the rescan pose, the labels and
// object statistics read back from the instance map, partial-volume blur, gain and noise.

#include <cstdint>
#include <vector>

#include "phantoms/image.h"
#include "phantoms/pose.h"
#include "phantoms/random.h"
#include "phantoms/scenario.h"
#include "phantoms/subject.h"

namespace frugal {

// A subject before acquisition, in subject space (world of the rest pose).
struct RestSubject {
  FloatImage signal;       // noiseless, sharp, with partial-volume object edges
  LabelImage field;        // 1 inside the field, 0 outside
  InstanceImage instances; // object id per voxel (0 = none); voids: 1 marks the region
  SubjectTruth truth;      // objects in subject space; scalar truth filled by the family
};

struct Confounder {
  double value = 1.0;  // what is recorded in truth
  double gain = 1.0;   // multiplicative intensity factor applied at acquisition
};

// Draws the nuisance factor so that its correlation with the target is options.correlation:
// z = rho * standardised_target + sqrt(1 - rho^2) * e, factor = 1 + spread * z (clamped > 0).
double draw_confounder_score(const ConfounderOptions& options, double target, double target_mean,
                             double target_sd, RandomStream& random);

// Moves a rest subject into the pose of rescan `rescan` (identity for 0); objects follow exactly.
RigidPose rescan_pose(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan);
void apply_pose(RestSubject& rest, const RigidPose& pose, float outside_value);

// Label image from field and instances, and per-object mask volumes, reference-slice flags,
// count, count in the reference slice, affected fraction and field volume.
LabelImage finish_truth(const RestSubject& rest, SubjectTruth& truth, int reference_slice);

// PSF blur, gain and noise, in that order.
void acquire(FloatImage& signal, const ScenarioOptions& scenario, double gain, RandomStream& noise);

}  // namespace frugal
