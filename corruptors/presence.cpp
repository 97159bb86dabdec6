#include "corruptors/presence.h"

#include <algorithm>

#include "corruptors/detection.h"
#include "corruptors/grade.h"

namespace frugal {

Label make_presence(const Subject& subject, const RaterOptions& rater, RandomStream& random) {
  Label label;
  label.kind = LabelKind::presence;
  bool present = false;
  if (subject.truth.family == Family::streaks) {
    // The minimum-visibility rule is the detection curve: present when anything is noticed.
    const std::vector<bool> noticed = notice_objects(subject.truth, rater.detection, random);
    present = std::find(noticed.begin(), noticed.end(), true) != noticed.end();
  } else {
    // A region without separate lesions (voids) is present when the rater's perceived extent lies
    // above the "none" grade, so presence and grade agree for one rater.
    const double perceived = perceive_fraction(subject.truth.affected_fraction, rater.grading, random);
    present = grade_of_fraction(perceived, rater.grading) > 0;
  }
  label.value = present ? 1.0 : 0.0;
  label.cost_seconds = rater.cost.presence_per_image_s;
  return label;
}

}  // namespace frugal
