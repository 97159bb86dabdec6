#include "corruptors/grade.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/phantom.h"

namespace frugal {
namespace {

ScenarioOptions lungs() {
  ScenarioOptions s = default_scenario(Family::voids);
  s.geometry.size_2d = {64, 64};
  s.voids.target = Distribution::uniform_between(0.0, 0.6);  // spans every default grade
  return s;
}

RandomStream stream_for(std::uint64_t seed, int subject) {
  return RandomStream(seed, static_cast<std::uint64_t>(subject), StreamPurpose::rater, 2);
}

// Upper edges are inclusive: bin i holds (edge[i-1], edge[i]] (grade.h); the default edges are
// 0, 3%, 10%, 25%, 50% (rater.h, invented default).
TEST(GradeOfFraction, DefaultBinEdges) {
  const GradingOptions grading;
  EXPECT_EQ(grading.bins(), 6);
  EXPECT_EQ(grade_of_fraction(0.0, grading), 0);   // none
  EXPECT_EQ(grade_of_fraction(1e-6, grading), 1);  // trace
  EXPECT_EQ(grade_of_fraction(0.03, grading), 1);
  EXPECT_EQ(grade_of_fraction(0.0300001, grading), 2);
  EXPECT_EQ(grade_of_fraction(0.10, grading), 2);
  EXPECT_EQ(grade_of_fraction(0.2, grading), 3);
  EXPECT_EQ(grade_of_fraction(0.4, grading), 4);
  EXPECT_EQ(grade_of_fraction(0.5, grading), 4);
  EXPECT_EQ(grade_of_fraction(0.9, grading), 5);  // open top bin
  EXPECT_EQ(grade_of_fraction(1.0, grading), 5);
}

TEST(GradeOfFraction, CustomEdgesWithoutANoneBin) {
  GradingOptions grading;
  grading.bin_edges = {0.05, 0.2};
  EXPECT_EQ(grading.bins(), 3);
  EXPECT_EQ(grade_of_fraction(0.0, grading), 0);
  EXPECT_EQ(grade_of_fraction(0.05, grading), 0);
  EXPECT_EQ(grade_of_fraction(0.1, grading), 1);
  EXPECT_EQ(grade_of_fraction(0.7, grading), 2);
}

// A rater without perception error or bias grades the true bin, even at a bin edge.
TEST(MakeGrade, ExactRaterGradesTheTrueBin) {
  RaterOptions rater;
  rater.grading.perception_sd = 0.0;
  rater.grading.bias = 0.0;
  for (int subject = 0; subject < 60; ++subject) {
    const Subject s = generate_subject(lungs(), 3, subject);
    RandomStream random = stream_for(3, subject);
    const Label label = make_grade(s, rater, random);
    EXPECT_EQ(label.kind, LabelKind::grade);
    EXPECT_EQ(label.value, grade_of_fraction(s.truth.affected_fraction, rater.grading)) << "seed 3 subject " << subject;
    EXPECT_EQ(label.cost_seconds, rater.cost.grade_per_image_s);
  }
  Subject edge;
  edge.truth.affected_fraction = 0.1;  // exactly on an edge
  RandomStream random = stream_for(3, 0);
  EXPECT_EQ(make_grade(edge, rater, random).value, 2);
}

// A positive bias moves every perceived fraction up (same normal deviate through the same
// stream), so no grade falls and some rise; the mean grade rises.
TEST(MakeGrade, BiasShiftsGradesUp) {
  RaterOptions fair;
  RaterOptions generous = fair;
  generous.grading.bias = 0.8;
  double fair_sum = 0.0, generous_sum = 0.0;
  for (int subject = 0; subject < 200; ++subject) {
    const Subject s = generate_subject(lungs(), 4, subject);
    RandomStream a = stream_for(4, subject);
    RandomStream b = stream_for(4, subject);
    const double fair_grade = make_grade(s, fair, a).value;
    const double generous_grade = make_grade(s, generous, b).value;
    EXPECT_GE(generous_grade, fair_grade) << "seed 4 subject " << subject;
    fair_sum += fair_grade;
    generous_sum += generous_grade;
  }
  EXPECT_GT(generous_sum, fair_sum + 20.0);
}

// Perception error on the logit scale: logit(perceived) - logit(true) ~ N(bias, perception_sd)
// (rater.h); mean within 4 sd / sqrt(n), SD within 4 sd / sqrt(2n) (normal-theory SEs).
TEST(PerceiveFraction, LogitErrorHasTheConfiguredBiasAndSd) {
  GradingOptions grading;
  grading.perception_sd = 0.5;
  grading.bias = 0.3;
  RandomStream random(17, 0, StreamPurpose::rater, 0);
  const int n = 20000;
  const double truth = 0.2;
  double sum = 0.0, sum_squares = 0.0;
  for (int i = 0; i < n; ++i) {
    const double perceived = perceive_fraction(truth, grading, random);
    const double error = std::log(perceived / (1.0 - perceived)) - std::log(truth / (1.0 - truth));
    sum += error;
    sum_squares += error * error;
  }
  const double mean = sum / n;
  const double sd = std::sqrt(sum_squares / n - mean * mean);
  EXPECT_NEAR(mean, 0.3, 4.0 * 0.5 / std::sqrt(n)) << "seed 17";
  EXPECT_NEAR(sd, 0.5, 4.0 * 0.5 / std::sqrt(2.0 * n)) << "seed 17";
}

// The rule for "none" (grade.h): a true fraction of 0 is perceived as 0, whatever the noise.
TEST(PerceiveFraction, NothingDrawnIsGradedNone) {
  GradingOptions grading;
  grading.perception_sd = 2.0;
  grading.bias = 2.0;
  RandomStream random(1, 0, StreamPurpose::rater, 0);
  for (int i = 0; i < 100; ++i) EXPECT_EQ(grade_of_fraction(perceive_fraction(0.0, grading, random), grading), 0);
}

}  // namespace
}  // namespace frugal
