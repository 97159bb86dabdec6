#include "corruptors/grade.h"

#include <algorithm>
#include <cmath>

namespace frugal {

namespace {

// Keeps logit() finite; 1e-4 is below one voxel in a 128 x 128 field, so no real fraction moves.
constexpr double kFractionClamp = 1e-4;

}  // namespace

double perceive_fraction(double true_fraction, const GradingOptions& grading, RandomStream& random) {
  // Drawn before any early return so that every grade label uses its stream the same way.
  const double deviate = random.normal();
  if (!(true_fraction > 0.0)) return 0.0;
  const double shift = grading.bias + grading.perception_sd * deviate;
  // An exact rater sees the exact fraction, even at a bin edge (the logit round trip could round
  // it across the edge).
  if (shift == 0.0) return true_fraction;
  const double f = std::clamp(true_fraction, kFractionClamp, 1.0 - kFractionClamp);
  return 1.0 / (1.0 + std::exp(-(std::log(f / (1.0 - f)) + shift)));
}

int grade_of_fraction(double fraction, const GradingOptions& grading) {
  int bin = 0;
  for (double edge : grading.bin_edges)
    if (fraction > edge) ++bin;
  return bin;
}

Label make_grade(const Subject& subject, const RaterOptions& rater, RandomStream& random) {
  Label label;
  label.kind = LabelKind::grade;
  label.value =
      grade_of_fraction(perceive_fraction(subject.truth.affected_fraction, rater.grading, random), rater.grading);
  label.cost_seconds = rater.cost.grade_per_image_s;
  return label;
}

}  // namespace frugal
