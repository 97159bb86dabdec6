#pragma once
// Ordinal grades of the affected fraction (GradingOptions: perception error on the logit scale,
// rater bias, bins).

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

Label make_grade(const Subject& subject, const RaterOptions& rater, RandomStream& random);

// The rater's perceived affected fraction: the true fraction moved on the logit scale by the bias
// and perception_sd x N(0, 1) (one normal draw, always made). A true fraction of exactly 0 is
// perceived as 0: with nothing drawn there is nothing to misjudge.
double perceive_fraction(double true_fraction, const GradingOptions& grading, RandomStream& random);

// The bin index of a fraction under the given upper bin edges (the top bin is open): the number of
// edges strictly below it, so bin i holds (edge[i-1], edge[i]] and, with the default first edge
// 0, bin 0 holds exactly 0 ("none").
int grade_of_fraction(double fraction, const GradingOptions& grading);

}  // namespace frugal
