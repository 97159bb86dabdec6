#include "corruptors/points.h"

#include "corruptors/detection.h"

namespace frugal {

Label make_points(const Subject& subject, const RaterOptions& rater, RandomStream& random) {
  require_lesion_objects(subject.truth, LabelKind::points);
  const std::vector<bool> noticed = notice_objects(subject.truth, rater.detection, random);
  // In 2D the objects lie in the image plane and so do the clicks.
  const bool flat = subject.image.shape().z == 1;
  Label label;
  label.kind = LabelKind::points;
  for (std::size_t n = 0; n < noticed.size(); ++n) {
    if (!noticed[n]) continue;
    const ObjectRecord& object = subject.truth.objects[n];
    Click click;
    // Three draws per click in 2D and 3D alike, so the stream is used the same way in both.
    for (std::size_t axis = 0; axis < 3; ++axis) {
      const double offset = rater.clicks.jitter_mm * random.normal();
      click.position_mm[axis] = object.centre_mm[axis] + (flat && axis == 2 ? 0.0 : offset);
    }
    label.clicks.push_back(click);
  }
  label.cost_seconds =
      rater.cost.points_per_image_s + rater.cost.points_per_click_s * static_cast<double>(label.clicks.size());
  return label;
}

}  // namespace frugal
