#include "experiments/measure/detection_matching.h"

#include <gtest/gtest.h>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

// Hand-built cases; expected counts follow from the documented matching rule (common practice,
// no source).
Image<std::uint8_t> blank(int x, int y, int z = 1) {
  Geometry geometry;
  geometry.shape = {x, y, z};
  return Image<std::uint8_t>(geometry, 0);
}

void box(Image<std::uint8_t>& mask, int x0, int x1, int y0, int y1, int z0 = 0, int z1 = 1) {
  for (int z = z0; z < z1; ++z) {
    for (int y = y0; y < y1; ++y) {
      for (int x = x0; x < x1; ++x) mask.at(x, y, z) = 1;
    }
  }
}

TEST(DetectionMatching, CountsHitsMissesAndFalseAlarms2D) {
  Image<std::uint8_t> truth = blank(20, 20);
  Image<std::uint8_t> predicted = blank(20, 20);
  box(truth, 1, 4, 1, 4);      // found exactly
  box(truth, 10, 13, 10, 13);  // found with a shift (IoU 4/14)
  box(truth, 16, 18, 1, 3);    // missed
  box(predicted, 1, 4, 1, 4);
  box(predicted, 11, 14, 11, 14);
  box(predicted, 1, 3, 16, 18);  // false alarm
  const DetectionResult result = match_detections(truth, predicted);
  EXPECT_EQ(result.truth_lesions, 3);
  EXPECT_EQ(result.predicted_lesions, 3);
  EXPECT_EQ(result.true_positives, 2);
  EXPECT_EQ(result.false_positives, 1);
  EXPECT_EQ(result.false_negatives, 1);
  EXPECT_NEAR(result.precision, 2.0 / 3.0, 1e-12);
  EXPECT_NEAR(result.recall, 2.0 / 3.0, 1e-12);
  EXPECT_NEAR(result.f1, 2.0 / 3.0, 1e-12);
  EXPECT_NEAR(result.matches[1].iou, 4.0 / 14.0, 1e-12);
}

TEST(DetectionMatching, OnePredictionCannotMatchTwoLesions) {
  Image<std::uint8_t> truth = blank(12, 4);
  Image<std::uint8_t> predicted = blank(12, 4);
  box(truth, 0, 3, 0, 3);
  box(truth, 4, 7, 0, 3);
  box(predicted, 0, 7, 0, 3);  // one blob over both lesions
  const DetectionResult result = match_detections(truth, predicted);
  EXPECT_EQ(result.true_positives, 1);
  EXPECT_EQ(result.false_negatives, 1);
  EXPECT_EQ(result.false_positives, 0);
}

TEST(DetectionMatching, MinimumIouRejectsSlightTouch) {
  Image<std::uint8_t> truth = blank(10, 10);
  Image<std::uint8_t> predicted = blank(10, 10);
  box(truth, 0, 5, 0, 5);
  box(predicted, 4, 9, 4, 9);  // IoU 1/49
  EXPECT_EQ(match_detections(truth, predicted).true_positives, 0);
  DetectionMatchingOptions options;
  options.minimum_iou = 0.01;
  EXPECT_EQ(match_detections(truth, predicted, options).true_positives, 1);
}

TEST(DetectionMatching, ThreeDimensionalLesionsAcrossSlices) {
  // A diagonal chain through slices is one lesion with 26-connectivity and three with 6.
  Image<std::uint8_t> truth = blank(6, 6, 6);
  truth.at(1, 1, 1) = truth.at(2, 2, 2) = truth.at(3, 3, 3) = 1;
  const Image<std::uint8_t> predicted = truth;
  EXPECT_EQ(match_detections(truth, predicted).truth_lesions, 1);
  DetectionMatchingOptions face;
  face.connectivity.connectivity = 6;
  const DetectionResult result = match_detections(truth, predicted, face);
  EXPECT_EQ(result.truth_lesions, 3);
  EXPECT_EQ(result.true_positives, 3);
  EXPECT_DOUBLE_EQ(result.f1, 1.0);
}

TEST(DetectionMatching, EmptyMasksScorePerfectly) {
  const DetectionResult result = match_detections(blank(5, 5), blank(5, 5));
  EXPECT_DOUBLE_EQ(result.precision, 1.0);
  EXPECT_DOUBLE_EQ(result.recall, 1.0);
  EXPECT_DOUBLE_EQ(result.f1, 1.0);
}

TEST(DetectionMatching, RejectsBadOptions) {
  DetectionMatchingOptions options;
  options.minimum_iou = 0.0;
  EXPECT_THROW(match_detections(blank(5, 5), blank(5, 5), options), UserError);
  EXPECT_THROW(match_detections(blank(5, 5), blank(5, 6)), UserError);
}

}  // namespace
}  // namespace frugal::measure
