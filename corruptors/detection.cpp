#include "corruptors/detection.h"

#include "phantoms/user_error.h"

namespace frugal {

std::vector<bool> notice_objects(const SubjectTruth& truth, const DetectionOptions& detection, RandomStream& random) {
  std::vector<bool> noticed(truth.objects.size(), false);
  for (std::size_t n = 0; n < truth.objects.size(); ++n) {
    const ObjectRecord& object = truth.objects[n];
    double probability = 0.0;
    switch (object.kind) {
      case ObjectKind::lesion: probability = detection.probability(object.length_mm, object.contrast); break;
      case ObjectKind::dot_distractor: probability = detection.dot_confusion; break;
      case ObjectKind::line_distractor: probability = detection.line_confusion; break;
    }
    // Exactly one draw per object, whatever its kind or probability, so that changing one
    // parameter (as calibration does) leaves every other object's draw in place.
    noticed[n] = random.uniform() < probability;
  }
  return noticed;
}

void require_lesion_objects(const SubjectTruth& truth, LabelKind kind) {
  if (truth.family == Family::streaks) return;
  throw UserError(to_string(kind) + " labels need separate lesions to find, and the " + to_string(truth.family) +
                  " family has none (its target is an extent); use presence or grade labels");
}

}  // namespace frugal
