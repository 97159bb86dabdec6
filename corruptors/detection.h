#pragma once
// Which objects a rater notices, shared by presence, count, points and outlines so that one
// rater's answers agree with each other: each object is noticed with DetectionOptions'
// probability (lesions) or mistaken for a lesion with its confusion probability (look-alikes).

#include <vector>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

// One entry per truth.objects entry: true when the rater reports it as a lesion.
std::vector<bool> notice_objects(const SubjectTruth& truth, const DetectionOptions& detection, RandomStream& random);

// Count and point labels need lesion objects; throws UserError for a family without them (voids).
void require_lesion_objects(const SubjectTruth& truth, LabelKind kind);

}  // namespace frugal
