#pragma once
// Point clicks: one click per noticed lesion (and per mistaken look-alike), jittered.

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

Label make_points(const Subject& subject, const RaterOptions& rater, RandomStream& random);

}  // namespace frugal
