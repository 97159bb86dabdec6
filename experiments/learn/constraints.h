#pragma once
// Plain-number entry points to the size constraint that grade-bounds trains with, so that tests
// and other parts can check it without torch. The torch implementation is in losses.cpp.

#include "corruptors/rater.h"

namespace frugal::learn {

// Fraction interval a grade implies under the rater's bins: grade k holds fractions in
// (edge[k-1], edge[k]] (grade_of_fraction in corruptors/grade.cpp); grade 0 is [0, edge[0]] and
// the top grade (edge[last], 1]. Throws UserError for a grade outside [0, bins).
struct FractionInterval {
  double lower = 0.0;
  double upper = 1.0;
};
FractionInterval grade_fraction_interval(int grade, const GradingOptions& grading);

// Quadratic inequality penalty of size constraints (Kervadec et al., "Constrained-CNN losses for
// weakly supervised segmentation", Medical Image Analysis 2019): (V - a)^2 below a, (V - b)^2
// above b, 0 inside [a, b]. Evaluated by the same torch code that training uses.
double size_constraint_penalty(double volume, double lower, double upper);

}  // namespace frugal::learn
