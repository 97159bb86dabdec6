#include "experiments/measure/repeatability.h"

#include <gtest/gtest.h>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

// Bland & Altman (1986) peak expiratory flow data (l/min): two readings per subject per meter.
Eigen::MatrixXd pairs(const std::vector<double>& first, const std::vector<double>& second) {
  Eigen::MatrixXd m(static_cast<Eigen::Index>(first.size()), 2);
  for (std::size_t i = 0; i < first.size(); ++i) {
    m(static_cast<Eigen::Index>(i), 0) = first[i];
    m(static_cast<Eigen::Index>(i), 1) = second[i];
  }
  return m;
}
const std::vector<double> kWright1{494, 395, 516, 434, 476, 557, 413, 442, 650, 433, 417, 656, 267, 478, 178, 423, 427};
const std::vector<double> kWright2{490, 397, 512, 401, 470, 611, 415, 431, 638, 429, 420, 633, 275, 492, 165, 372, 421};
const std::vector<double> kMini1{512, 430, 520, 428, 500, 600, 364, 380, 658, 445, 432, 626, 260, 477, 259, 350, 451};
const std::vector<double> kMini2{525, 415, 508, 444, 500, 625, 460, 390, 642, 432, 420, 605, 227, 467, 268, 370, 443};

TEST(Repeatability, FactorIsOnePointNineSixRootTwo) {
  EXPECT_NEAR(repeatability_factor(), 2.7718585823, 1e-10);  // 1.96 * sqrt(2) [C]
}

TEST(Repeatability, PeakFlowWrightMeter) {
  const RepeatabilityResult result = repeatability(pairs(kWright1, kWright2));
  // numpy: s_w = sqrt(sum d^2 / 2n) (Bland & Altman 1996, BMJ 313: 744) on the Wright meter pairs
  // of Bland & Altman 1986 (Lancet i: 307-310); 2 x SD(d) is the BSI coefficient of the 1986 paper.
  EXPECT_NEAR(result.within_subject_sd, 15.306669057866863, 1e-9);
  EXPECT_NEAR(result.repeatability_coefficient, 42.42792199372817, 1e-8);
  EXPECT_NEAR(result.paired_difference_coefficient, 43.44807583907079, 1e-8);
  // chi-squared interval on 17 df with scipy.stats.chi2.ppf [C].
  EXPECT_NEAR(result.within_subject_sd_lower, 11.485934584231032, 1e-7);
  EXPECT_NEAR(result.within_subject_sd_upper, 22.946900927380472, 1e-7);
  EXPECT_DOUBLE_EQ(result.degrees_of_freedom, 17.0);
}

TEST(Repeatability, PeakFlowMiniMeter) {
  const RepeatabilityResult result = repeatability(pairs(kMini1, kMini2));
  // numpy / scipy as above [C].
  EXPECT_NEAR(result.within_subject_sd, 19.91083063236158, 1e-9);
  EXPECT_NEAR(result.repeatability_coefficient, 55.19000676806285, 1e-8);
  EXPECT_NEAR(result.paired_difference_coefficient, 57.744620324932335, 1e-8);
  EXPECT_NEAR(result.within_subject_sd_lower, 14.940840315840692, 1e-7);
  EXPECT_NEAR(result.within_subject_sd_upper, 29.84920208148316, 1e-7);
}

TEST(Repeatability, ThreeReplicatesPoolWithinSubjectVariance) {
  Eigen::MatrixXd three(17, 3);
  three << pairs(kWright1, kWright2), pairs(kMini1, kMini1).col(0);
  // numpy: sqrt(sum of squared deviations from subject means / (n (k-1))) [C].
  EXPECT_NEAR(repeatability(three).within_subject_sd, 22.620916921136093, 1e-9);
}

TEST(Repeatability, RejectsSingleReplicate) {
  EXPECT_THROW(repeatability(Eigen::MatrixXd::Ones(5, 1)), UserError);
}

}  // namespace
}  // namespace frugal::measure
