// The model-selection criterion and the grade-to-fraction reading of scalar heads, on
// hand-made predictions whose answers are worked out in the comments (common practice, no
// source; Dice = 2|A n B| / (|A| + |B|), Dice 1945).

#include "experiments/learn/validation_error.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "experiments/learn/grade_fraction.h"
#include "phantoms/image.h"
#include "phantoms/image_ops.h"

namespace frugal::learn {
namespace {

Label label_of(LabelKind kind, double value = 0.0) {
  Label label;
  label.kind = kind;
  label.value = value;
  return label;
}

Prediction with_count(double count) {
  Prediction prediction;
  prediction.count = count;
  return prediction;
}

// A 4x1 image: map values and an outline, one voxel each.
Geometry line_geometry() { return centred_geometry({4, 1, 1}, {1.0, 1.0, 1.0}); }

TEST(ValidationError, CountsAreMeanAbsoluteErrorAndACapOnlyBoundsFromBelow) {
  const TrainOptions options = [] {
    TrainOptions o;
    o.strategy = Strategy::count_map;
    return o;
  }();
  Label capped = label_of(LabelKind::count, 10.0);
  capped.capped = true;
  const Label three = label_of(LabelKind::count, 3.0), zero = label_of(LabelKind::count, 0.0);
  // |5 - 3| = 2, |0.5 - 0| = 0.5, capped at 10: 12 is no error; mean (2 + 0.5 + 0) / 3.
  EXPECT_DOUBLE_EQ(validation_error({with_count(5.0), with_count(0.5), with_count(12.0)}, {&three, &zero, &capped},
                                    options),
                   2.5 / 3.0);
  // Capped at 10, answered 7: 3 short.
  EXPECT_DOUBLE_EQ(validation_error({with_count(7.0)}, {&capped}, options), 3.0);
  EXPECT_TRUE(std::isnan(validation_error({}, {}, options)));
}

TEST(ValidationError, OutlinesArePooledDiceSoEmptyImagesCount) {
  TrainOptions options;
  options.strategy = Strategy::mask;
  Label first = label_of(LabelKind::outline), empty = label_of(LabelKind::outline);
  first.mask = LabelImage(line_geometry(), 0);
  first.mask.data()[0] = first.mask.data()[1] = 1;
  empty.mask = LabelImage(line_geometry(), 0);
  Prediction a, b;
  a.map = FloatImage(line_geometry(), 0.0F);
  a.map.data()[1] = a.map.data()[2] = 0.9F;  // one of two outlined voxels, one false
  b.map = FloatImage(line_geometry(), 0.0F);
  b.map.data()[3] = 0.6F;  // a false voxel on an image without lesions
  // Pooled: |A n B| = 1, |A| = 3, |B| = 2: Dice 0.4, error 0.6.
  EXPECT_NEAR(validation_error({a, b}, {&first, &empty}, options), 0.6, 1e-12);
  // Nothing outlined and nothing found: perfect.
  Prediction none;
  none.map = FloatImage(line_geometry(), 0.1F);
  EXPECT_DOUBLE_EQ(validation_error({none}, {&empty}, options), 0.0);
}

TEST(ValidationError, GradesAreTheFractionsDistanceFromTheirBin) {
  TrainOptions options;
  options.strategy = Strategy::grade_bounds;
  options.grading.bin_edges = {0.0, 0.03, 0.10, 0.25, 0.50};
  const Label grade2 = label_of(LabelKind::grade, 2.0);  // (0.03, 0.10]
  Prediction inside, above;
  inside.affected_fraction = 0.07;
  above.affected_fraction = 0.16;
  EXPECT_DOUBLE_EQ(validation_error({inside}, {&grade2}, options), 0.0);
  EXPECT_NEAR(validation_error({above}, {&grade2}, options), 0.06, 1e-12);
  // Scalar regression on grades: the grade's own distance.
  options.strategy = Strategy::scalar;
  Prediction scalar;
  scalar.grade = 3.25;
  EXPECT_DOUBLE_EQ(validation_error({scalar}, {&grade2}, options), 1.25);
}

TEST(ValidationError, PresenceIsCrossEntropyPointsAreTheClickCountAndPartialMasksDeferToTheLoss) {
  TrainOptions options;
  options.strategy = Strategy::presence_mil;
  const Label present = label_of(LabelKind::presence, 1.0), absent = label_of(LabelKind::presence, 0.0);
  Prediction p;
  p.presence_probability = 0.8;
  // (-ln 0.8 - ln 0.2) / 2.
  EXPECT_NEAR(validation_error({p, p}, {&present, &absent}, options), (-std::log(0.8) - std::log(0.2)) / 2.0, 1e-12);
  options.strategy = Strategy::points;
  Label clicks = label_of(LabelKind::points);
  clicks.clicks.resize(3);
  EXPECT_DOUBLE_EQ(validation_error({with_count(1.0)}, {&clicks}, options), 2.0);
  options.strategy = Strategy::partial;
  const Label partial = label_of(LabelKind::partial_mask);
  EXPECT_TRUE(std::isnan(validation_error({Prediction{}}, {&partial}, options)));
}

TEST(ValidationError, MixedPlansSumTheKindsMeans) {
  TrainOptions options;
  options.strategy = Strategy::mixed;
  Label outline = label_of(LabelKind::outline);
  outline.mask = LabelImage(line_geometry(), 0);
  outline.mask.data()[0] = 1;
  Prediction found;
  found.map = FloatImage(line_geometry(), 0.0F);
  found.map.data()[0] = 1.0F;  // Dice 1
  found.count = 1.0;
  const Label count4 = label_of(LabelKind::count, 4.0), count2 = label_of(LabelKind::count, 2.0);
  // Outline error 0 + count errors (3 + 1) / 2.
  EXPECT_DOUBLE_EQ(validation_error({found, found, found}, {&outline, &count4, &count2}, options), 2.0);
}

TEST(FractionOfGrade, ReadsGradesThroughTheMiddlesOfTheirBins) {
  GradingOptions grading;
  grading.bin_edges = {0.0, 0.03, 0.10, 0.25, 0.50};
  // Middles: 0, 0.015, 0.065, 0.175, 0.375, 0.75 (top bin (0.5, 1]).
  EXPECT_DOUBLE_EQ(fraction_of_grade(0.0, grading), 0.0);
  EXPECT_DOUBLE_EQ(fraction_of_grade(2.0, grading), 0.065);
  EXPECT_NEAR(fraction_of_grade(2.5, grading), 0.12, 1e-12);
  EXPECT_DOUBLE_EQ(fraction_of_grade(5.0, grading), 0.75);
  EXPECT_DOUBLE_EQ(fraction_of_grade(7.0, grading), 0.75);  // clamped to the top grade
  EXPECT_DOUBLE_EQ(fraction_of_grade(-1.0, grading), 0.0);
}

}  // namespace
}  // namespace frugal::learn
