#include "experiments/calibration/calibration.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/user_error.h"

namespace frugal {
namespace {

ScenarioOptions pilot_scenario(Family family) {
  ScenarioOptions s = default_scenario(family);
  s.geometry.size_2d = {64, 64};
  // Poisson counts: the F-based ICC interval assumes roughly normal ratings, which heavy-tailed
  // (negative binomial) counts are not.
  if (family == Family::streaks) s.streaks.count = {CountDistribution::Kind::poisson, 6.0};
  return s;
}

struct Case {
  const char* name;
  Family family;
  CalibrationStatistic statistic;
  double target;
};

class Calibration : public ::testing::TestWithParam<Case> {};

// The calibrated rater reproduces the requested agreement: on the calibration pilot to the search
// tolerance, and on an independent pilot (another seed) within 3 standard errors of the
// difference between two independent pilots of the same size (sqrt(2) SE; the SE is the fresh
// pilot's 95% half-width / 1.96: kappa's large-sample SE, ICC's F-based interval, Dice's mean).
// The calibration pilot's own sampling error carries into the calibrated value, hence sqrt(2);
// 3 SE makes a chance failure about 3 in 1000 (common practice, no source).
TEST_P(Calibration, ReproducesTheRequestedAgreement) {
  const Case c = GetParam();
  const ScenarioOptions scenario = pilot_scenario(c.family);
  CalibrationOptions options;
  options.statistic = c.statistic;
  options.target = c.target;
  options.subjects = 300;
  options.seed = 5;
  const CalibrationResult result = calibrate(scenario, RaterOptions{}, options);
  EXPECT_LT(result.evaluations, 42) << "bisection did not converge: " << result.parameter << " = " << result.value;
  EXPECT_GT(result.value, 0.0) << result.parameter;
  EXPECT_LE(result.lower, c.target);
  EXPECT_GE(result.upper, c.target);
  const Agreement fresh = simulated_agreement(scenario, result.rater, c.statistic, 300, 6);
  const double standard_error = 0.5 * (fresh.upper - fresh.lower) / 1.96;
  EXPECT_NEAR(fresh.value, c.target, 3.0 * std::sqrt(2.0) * standard_error) << "independent pilot, seed 6";
}

INSTANTIATE_TEST_SUITE_P(
    Statistics, Calibration,
    ::testing::Values(Case{"grade_kappa", Family::voids, CalibrationStatistic::grade_kappa, 0.55},
                      Case{"count_icc", Family::streaks, CalibrationStatistic::count_icc, 0.7},
                      Case{"outline_dice", Family::streaks, CalibrationStatistic::outline_dice, 0.6}),
    [](const ::testing::TestParamInfo<Case>& param_info) { return std::string(param_info.param.name); });

TEST(Calibration, UnreachableTargetIsAUserError) {
  CalibrationOptions options;
  options.statistic = CalibrationStatistic::grade_kappa;
  options.target = 0.999;
  options.subjects = 60;
  RaterOptions rater;
  rater.grading.bias = 1.5;  // a biased pair can never agree perfectly with quadratic weights
  rater.panel.bias_sd = 1.0;
  EXPECT_THROW(calibrate(pilot_scenario(Family::voids), rater, options), UserError);
  options.target = 1.5;
  EXPECT_THROW(calibrate(pilot_scenario(Family::voids), rater, options), UserError);
}

}  // namespace
}  // namespace frugal
