#pragma once
// A real-valued grade (a scalar head's answer) read as an affected fraction, so that scalar
// regression on grades answers the quantity the user asks for and compares with grade-bounds.
// Torch-free.

#include "corruptors/rater.h"

namespace frugal::learn {

// Piecewise linear through the middles of the grades' fraction intervals (constraints.h): grade
// k gives the middle of bin k, a grade between k and k + 1 lies on the line between the two
// middles; grades are clamped to [0, bins - 1]. Bin middles are the least-squares answer for a
// fraction known only to lie in its bin (common practice, no source).
double fraction_of_grade(double grade, const GradingOptions& grading);

}  // namespace frugal::learn
