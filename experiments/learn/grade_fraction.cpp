#include "experiments/learn/grade_fraction.h"

#include <algorithm>
#include <cmath>

#include "experiments/learn/constraints.h"

namespace frugal::learn {
namespace {

double bin_middle(int grade, const GradingOptions& grading) {
  const FractionInterval bin = grade_fraction_interval(grade, grading);
  return 0.5 * (bin.lower + bin.upper);
}

}  // namespace

double fraction_of_grade(double grade, const GradingOptions& grading) {
  const int top = grading.bins() - 1;
  const double clamped = std::clamp(std::isfinite(grade) ? grade : 0.0, 0.0, static_cast<double>(top));
  const int below = std::min(static_cast<int>(std::floor(clamped)), top);
  if (below == top) return bin_middle(top, grading);
  const double t = clamped - below;
  return (1.0 - t) * bin_middle(below, grading) + t * bin_middle(below + 1, grading);
}

}  // namespace frugal::learn
