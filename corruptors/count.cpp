#include "corruptors/count.h"

#include <algorithm>

#include "corruptors/detection.h"

namespace frugal {

namespace {

bool in_scope(const ObjectRecord& object, CountScope scope) {
  switch (scope) {
    case CountScope::image: return true;
    case CountScope::reference_slice: return object.in_reference_slice;
    // World x = 0 is the image centre (phantoms centre the grid); the object's centre decides.
    case CountScope::left_half: return object.centre_mm[0] < 0.0;
    case CountScope::right_half: return object.centre_mm[0] >= 0.0;
  }
  return false;
}

}  // namespace

Label make_count(const Subject& subject, const RaterOptions& rater, CountScope scope, RandomStream& random) {
  require_lesion_objects(subject.truth, LabelKind::count);
  // Every object is looked at (one draw each) whatever the scope, so a rater's noticed set does
  // not depend on where the count is taken.
  const std::vector<bool> noticed = notice_objects(subject.truth, rater.detection, random);
  int tally = 0;
  for (std::size_t n = 0; n < noticed.size(); ++n)
    if (noticed[n] && in_scope(subject.truth.objects[n], scope)) ++tally;
  // A counting slip: one too many or one too few, equally often; both draws are always made.
  const bool slip = random.uniform() < rater.counting.slip_probability;
  const int direction = random.uniform() < 0.5 ? -1 : 1;
  if (slip) tally = std::max(0, tally + direction);

  Label label;
  label.kind = LabelKind::count;
  const int cap = rater.counting.cap;
  label.capped = cap > 0 && tally > cap;
  label.value = label.capped ? cap : tally;
  // A rater who answers "more than cap" stops counting one lesion past the cap.
  const int counted = label.capped ? cap + 1 : tally;
  label.cost_seconds = rater.cost.count_per_image_s + rater.cost.count_per_lesion_s * counted;
  return label;
}

}  // namespace frugal
