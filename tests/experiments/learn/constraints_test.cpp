// The size-constraint penalty and grade intervals of grade-bounds, plus the compile-time guarantee
// that truth cannot be handed to a learner.
#include "experiments/learn/constraints.h"

#include <gtest/gtest.h>

#include <functional>
#include <type_traits>
#include <utility>
#include <vector>

#include "experiments/learn/learner.h"
#include "phantoms/key_path.h"
#include "phantoms/subject.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

// Detection idiom: can TrainingSet::add be called with these arguments?
template <class Image, class LabelArg, class = void>
struct can_add : std::false_type {};
template <class Image, class LabelArg>
struct can_add<Image, LabelArg,
               std::void_t<decltype(std::declval<TrainingSet&>().add(std::declval<Image>(), std::declval<LabelArg>()))>>
    : std::true_type {};

// Positive control: the idiom does detect the intended call.
static_assert(can_add<FloatImage, Label>::value);
// No way in for truth: not a Subject, its SubjectTruth, nor its truth label image.
static_assert(!can_add<const Subject&, Label>::value);
static_assert(!can_add<FloatImage, const SubjectTruth&>::value);
static_assert(!can_add<FloatImage, const LabelImage&>::value);
static_assert(!can_add<const Subject&, const SubjectTruth&>::value);
static_assert(!std::is_constructible_v<TrainingSet, std::vector<Subject>>);
static_assert(!std::is_constructible_v<TrainingSet, const Subject&>);
static_assert(!std::is_constructible_v<TrainingSet, std::vector<Subject>, std::vector<Label>>);
static_assert(!std::is_constructible_v<TrainingSet, std::vector<FloatImage>, std::vector<SubjectTruth>>);
// train()'s third parameter (the per-epoch callback) has a default, which is not part of its type.
using EpochCallback = const std::function<void(const EpochProgress&)>&;
static_assert(!std::is_invocable_v<decltype(train)&, const std::vector<Subject>&, const TrainOptions&, EpochCallback>);
static_assert(!std::is_invocable_v<decltype(train)&, const Subject&, const TrainOptions&, EpochCallback>);
static_assert(std::is_invocable_v<decltype(train)&, const TrainingSet&, const TrainOptions&, EpochCallback>);

TEST(SizeConstraintPenalty, MatchesTheWorkedCheck) {
  // Kervadec et al. 2019 (Med Image Anal 54: 88-99) penalty (V - a)^2 below a, (V - b)^2 above
  // b, worked by hand: bounds [60, 100], V = 40 or 120 -> 400, V = 80 -> 0.
  EXPECT_DOUBLE_EQ(size_constraint_penalty(40.0, 60.0, 100.0), 400.0);
  EXPECT_DOUBLE_EQ(size_constraint_penalty(120.0, 60.0, 100.0), 400.0);
  EXPECT_DOUBLE_EQ(size_constraint_penalty(80.0, 60.0, 100.0), 0.0);
  // At the bounds the penalty is zero (closed interval; common practice, no source).
  EXPECT_DOUBLE_EQ(size_constraint_penalty(60.0, 60.0, 100.0), 0.0);
  EXPECT_DOUBLE_EQ(size_constraint_penalty(100.0, 60.0, 100.0), 0.0);
  // Image-tag negative: a = b = 0 gives V^2 (same paper).
  EXPECT_DOUBLE_EQ(size_constraint_penalty(0.25, 0.0, 0.0), 0.0625);
}

TEST(GradeFractionInterval, FollowsTheRatersBins) {
  // Bins of GradingOptions' default: grade k holds (edge[k-1], edge[k]] (corruptors/grade.cpp).
  const GradingOptions grading;
  EXPECT_DOUBLE_EQ(grade_fraction_interval(0, grading).lower, 0.0);
  EXPECT_DOUBLE_EQ(grade_fraction_interval(0, grading).upper, 0.0);
  EXPECT_DOUBLE_EQ(grade_fraction_interval(2, grading).lower, 0.03);
  EXPECT_DOUBLE_EQ(grade_fraction_interval(2, grading).upper, 0.10);
  EXPECT_DOUBLE_EQ(grade_fraction_interval(5, grading).lower, 0.50);
  EXPECT_DOUBLE_EQ(grade_fraction_interval(5, grading).upper, 1.0);
  EXPECT_THROW(grade_fraction_interval(6, grading), UserError);
  EXPECT_THROW(grade_fraction_interval(-1, grading), UserError);
}

// Each bad value is reported under its own key (common practice, no source).
template <class Change>
std::string message_after(Change change) {
  TrainOptions options;
  change(options);
  return options.validate();
}

TEST(TrainOptions, ValidateNamesTheKey) {
  // Each message begins with the key path relative to TrainOptions; nested structs' keys are
  // prefixed with their member's name (phantoms/key_path.h).
  const auto key_after = [](const std::function<void(TrainOptions&)>& change) {
    return key_path_of(message_after(change));
  };
  EXPECT_EQ(message_after([](TrainOptions&) {}), "");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.epochs = 0; }), "epochs");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.validation_fraction = 0.95; }), "validation_fraction");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.gce_q = 0.0; }), "gce_q");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.label_smoothing = 0.5; }), "label_smoothing");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.object_size_min_mm3 = 50.0; }), "object_size_min_mm3");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.consistency_weight = -1.0; }), "consistency_weight");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.augmentation.rotation_degrees = 90.0; }),
            "augmentation.rotation_degrees");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.line_filter.threshold = 2.0; }), "line_filter.threshold");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.line_filter.filter.sigmas_mm = {1.0, -1.0}; }),
            "line_filter.filter.sigmas_mm");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.grading.bin_edges = {0.5, 0.1}; }), "grading.bin_edges");
  EXPECT_EQ(key_after([](TrainOptions& o) { o.field.low = 10.0, o.field.high = 0.0; }), "field.low");
  EXPECT_THROW(strategy_from_string("density"), UserError);
  EXPECT_EQ(strategy_from_string("grade-bounds"), Strategy::grade_bounds);
  EXPECT_EQ(to_string(Strategy::count_map), "count-map");
  for (const char* name : {"mask", "mask-robust", "partial", "partial-naive", "count-map", "grade-bounds",
                           "presence-mil", "points", "scalar", "mixed", "threshold", "line-filter"})
    EXPECT_EQ(to_string(strategy_from_string(name)), name);
  EXPECT_EQ(robust_loss_from_string("bootstrap"), RobustLoss::bootstrapping);
  EXPECT_THROW(robust_loss_from_string("mae"), UserError);
}

TEST(TrainingSet, RejectsMixedShapesAndUnusableKinds) {
  Geometry geometry;
  geometry.shape = Shape{8, 8, 1};
  TrainingSet set;
  Label count;
  count.kind = LabelKind::count;
  set.add(FloatImage(geometry), count);
  Geometry other = geometry;
  other.shape.x = 16;
  EXPECT_THROW(set.add(FloatImage(other), count), UserError);
  EXPECT_THROW(set.add_unlabelled(FloatImage(other)), UserError);
  EXPECT_THROW(set.add(FloatImage(), count), UserError);
  // A strategy that cannot use the labels is refused before any training.
  set.add(FloatImage(geometry), count);
  TrainOptions options;
  options.strategy = Strategy::mask;
  EXPECT_THROW(train(set, options), UserError);
  // Two kinds are only for mixed, and mixed needs outlines as one of them.
  Label grade;
  grade.kind = LabelKind::grade;
  set.add(FloatImage(geometry), grade);
  EXPECT_THROW(set.kind(), UserError);
  EXPECT_EQ(set.kinds().size(), 2U);
  options.strategy = Strategy::count_map;
  EXPECT_THROW(train(set, options), UserError);
  options.strategy = Strategy::mixed;
  EXPECT_THROW(train(set, options), UserError);
}

}  // namespace
}  // namespace frugal::learn
