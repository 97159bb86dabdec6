#include "corruptors/labeler.h"

#include "corruptors/count.h"
#include "corruptors/grade.h"
#include "corruptors/outline.h"
#include "corruptors/points.h"
#include "corruptors/presence.h"
#include "corruptors/region_grow.h"

namespace frugal {

Label make_label(const Subject& subject, const RaterOptions& rater, const LabelRequest& request, std::uint64_t seed) {
  FRUGAL_CHECK(request.rater >= 0 && request.rater < rater.panel.raters);
  const RaterOptions member = panel_member(rater, seed, request.rater);
  // One stream per (subject, rescan, rater, kind): labels of different kinds or raters never share
  // random numbers, and adding a kind to a study leaves the others unchanged.
  const std::uint64_t repeat = (static_cast<std::uint64_t>(subject.truth.rescan) << 32U) |
                               (static_cast<std::uint64_t>(request.rater) << 8U) |
                               static_cast<std::uint64_t>(request.kind);
  RandomStream random(seed, static_cast<std::uint64_t>(subject.truth.subject), StreamPurpose::rater, repeat);
  Label label;
  switch (request.kind) {
    case LabelKind::presence: label = make_presence(subject, member, random); break;
    case LabelKind::count: label = make_count(subject, member, request.scope, random); break;
    case LabelKind::grade: label = make_grade(subject, member, random); break;
    case LabelKind::points: label = make_points(subject, member, random); break;
    case LabelKind::partial_mask: label = make_partial_mask(subject, member, random); break;
    case LabelKind::outline: label = make_outline(subject, member, random); break;
  }
  label.subject = subject.truth.subject;
  label.rescan = subject.truth.rescan;
  label.rater = request.rater;
  label.kind = request.kind;
  return label;
}

}  // namespace frugal
