#pragma once
// Lesion counts: noticed lesions plus mistaken look-alikes within the scope, then counting slips
// and the cap ("more than N").

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

Label make_count(const Subject& subject, const RaterOptions& rater, CountScope scope, RandomStream& random);

}  // namespace frugal
