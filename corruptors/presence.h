#pragma once
// Presence flags: 1 when the rater notices at least one lesion (or mistakes a look-alike for one).

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

Label make_presence(const Subject& subject, const RaterOptions& rater, RandomStream& random);

}  // namespace frugal
