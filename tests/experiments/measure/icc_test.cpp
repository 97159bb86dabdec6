#include "experiments/measure/icc.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

// Shrout & Fleiss (1979), Psychol Bull 86:420-428: 6 targets x 4 judges (the data table of the
// paper, identical to the `sf` matrix of the R psych::ICC help example).
Eigen::MatrixXd shrout_fleiss_ratings() {
  Eigen::MatrixXd y(6, 4);
  y << 9, 2, 5, 8, 6, 1, 3, 2, 8, 4, 6, 8, 7, 1, 2, 6, 10, 5, 6, 9, 6, 2, 4, 7;
  return y;
}

TEST(Icc, AnovaMeanSquares) {
  const IccAnova anova = icc_anova(shrout_fleiss_ratings());
  // Computed with numpy: the two-way ANOVA mean squares of Shrout & Fleiss 1979 (Psychol Bull
  // 86: 420-428) on their 6 x 4 example.
  EXPECT_NEAR(anova.between_subjects, 11.241667, 1e-6);
  EXPECT_NEAR(anova.within_subjects, 6.263889, 1e-6);
  EXPECT_NEAR(anova.between_raters, 32.486111, 1e-6);
  EXPECT_NEAR(anova.residual, 1.019444, 1e-6);
}

TEST(Icc, SixShroutFleissForms) {
  const IccResult result = intraclass_correlation(shrout_fleiss_ratings());
  // Computed with numpy from the ANOVA formulas [C]; the published two-decimal values of
  // Shrout & Fleiss (1979), from memory, are .17 .29 .71 .44 .62 .91 and agree.
  EXPECT_NEAR(result.get(IccForm::one_way_single).value, 0.1657417684, 1e-9);
  EXPECT_NEAR(result.get(IccForm::two_way_random_single).value, 0.2897637795, 1e-9);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).value, 0.7148407148, 1e-9);
  EXPECT_NEAR(result.get(IccForm::one_way_average).value, 0.4427971337, 1e-9);
  EXPECT_NEAR(result.get(IccForm::two_way_random_average).value, 0.6200505476, 1e-9);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_average).value, 0.9093155424, 1e-9);
  // Published two-decimal values (from memory), to their rounding.
  EXPECT_NEAR(result.get(IccForm::one_way_single).value, 0.17, 0.005);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_average).value, 0.91, 0.005);
}

TEST(Icc, ConfidenceIntervals) {
  const IccResult result = intraclass_correlation(shrout_fleiss_ratings());
  // Interval formulas of Shrout & Fleiss (1979) / McGraw & Wong (1996) evaluated with
  // scipy.stats.f.ppf [C]; the psych::ICC help output for `sf` (from memory) prints
  // -0.133/0.72, 0.019/0.76, 0.342/0.95, -0.884/0.91, 0.071/0.93, 0.676/0.99.
  const double tolerance = 1e-7;
  EXPECT_NEAR(result.get(IccForm::one_way_single).lower, -0.13293232487475096, tolerance);
  EXPECT_NEAR(result.get(IccForm::one_way_single).upper, 0.7225600623281211, tolerance);
  EXPECT_NEAR(result.get(IccForm::one_way_average).lower, -0.8844421552381196, tolerance);
  EXPECT_NEAR(result.get(IccForm::one_way_average).upper, 0.9124154203407756, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).lower, 0.34246476503392614, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).upper, 0.9458582599553597, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_average).lower, 0.6756747138163055, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_average).upper, 0.9858916781690623, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_random_single).lower, 0.018786513374712044, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_random_single).upper, 0.7610843696489529, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_random_average).lower, 0.07113681530250347, tolerance);
  EXPECT_NEAR(result.get(IccForm::two_way_random_average).upper, 0.927232040167722, tolerance);
}

TEST(Icc, FTests) {
  const IccResult result = intraclass_correlation(shrout_fleiss_ratings());
  // scipy.stats.f.sf [C].
  EXPECT_NEAR(result.get(IccForm::one_way_single).f_statistic, 1.7946784922394685, 1e-9);
  EXPECT_NEAR(result.get(IccForm::one_way_single).p_value, 0.1647688083446397, 1e-9);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).f_statistic, 11.027247956403299, 1e-9);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).p_value, 0.00013456651648433476, 1e-12);
}

TEST(Icc, ZeroResidualGivesFiniteIntervals) {
  // Raters differ only by a constant offset: EMS = 0, so consistency is perfect (ICC(3,1) = 1)
  // while absolute agreement is not. Identity of the formulas, no outside source.
  Eigen::MatrixXd y(4, 3);
  y << 1, 2, 4, 3, 4, 6, 2, 3, 5, 7, 8, 10;
  const IccResult result = intraclass_correlation(y);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).value, 1.0, 1e-12);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).lower, 1.0, 1e-12);
  const IccEstimate& absolute = result.get(IccForm::two_way_random_single);
  EXPECT_LT(absolute.value, 1.0);
  EXPECT_TRUE(std::isfinite(absolute.lower) && std::isfinite(absolute.upper));
  EXPECT_LE(absolute.lower, absolute.value);
  EXPECT_GE(absolute.upper, absolute.value);
}

TEST(Icc, FormWithNonPositiveDenominatorIsUndefined) {
  // 3 subjects x 2 raters. By hand from the ANOVA of Shrout & Fleiss (1979): BMS = 1/6,
  // WMS = 5/6, JMS = 1/6, EMS = 7/6. The ICC(2,k) (McGraw & Wong 1996 ICC(A,k)) denominator
  // BMS + (JMS - EMS)/n = 1/6 - 1/3 < 0, where the formula would give 6 with an inverted interval.
  Eigen::MatrixXd y(3, 2);
  y << 1, 2, 2, 2, 3, 1;
  const IccResult result = intraclass_correlation(y);
  const IccEstimate& undefined = result.get(IccForm::two_way_random_average);
  EXPECT_TRUE(std::isnan(undefined.value));
  EXPECT_TRUE(std::isnan(undefined.lower));
  EXPECT_TRUE(std::isnan(undefined.upper));
  // The other forms keep their values (same hand arithmetic, formulas of Shrout & Fleiss 1979):
  // ICC(1,1) = (1/6 - 5/6)/(1/6 + 5/6), ICC(2,1) = -1/(1/6 + 7/6 - 2/3), ICC(3,1) = -1/(1/6 + 7/6),
  // ICC(1,k) = (1/6 - 5/6)/(1/6), ICC(3,k) = (1/6 - 7/6)/(1/6).
  EXPECT_NEAR(result.get(IccForm::one_way_single).value, -2.0 / 3.0, 1e-12);
  EXPECT_NEAR(result.get(IccForm::two_way_random_single).value, -1.5, 1e-12);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_single).value, -0.75, 1e-12);
  EXPECT_NEAR(result.get(IccForm::one_way_average).value, -4.0, 1e-12);
  EXPECT_NEAR(result.get(IccForm::two_way_mixed_average).value, -6.0, 1e-12);
  // The F test of ICC = 0 does not depend on the form's denominator: BMS/EMS = 1/7.
  EXPECT_NEAR(undefined.f_statistic, 1.0 / 7.0, 1e-12);
}

TEST(Icc, OverflowingRatingsAreAUserError) {
  // Squares of 1e300 overflow to inf (IEEE 754 double, largest finite value about 1.8e308); the
  // F distribution must never see the result. Common practice, no source.
  Eigen::MatrixXd y(3, 2);
  y << 1e300, -1e300, -1e300, 1e300, 1e300, 1e300;
  EXPECT_THROW(icc_anova(y), UserError);
  EXPECT_THROW(intraclass_correlation(y), UserError);
  try {
    intraclass_correlation(y);
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("-1e150 to 1e150"), std::string::npos) << error.what();
  }
}

TEST(Icc, UndefinedFRatioIsAUserError) {
  // Equal subject means and raters that differ by an exact constant: BMS = EMS = 0, so the
  // two-way F = BMS/EMS is 0/0 (identity of the formulas, no outside source).
  Eigen::MatrixXd y(2, 2);
  y << 1, 2, 1, 2;
  EXPECT_THROW(intraclass_correlation(y), UserError);
}

TEST(Icc, NamesInBothConventions) {
  EXPECT_EQ(shrout_fleiss_name(IccForm::two_way_random_single), "ICC(2,1)");
  EXPECT_EQ(mcgraw_wong_name(IccForm::two_way_random_single), "ICC(A,1)");
  EXPECT_EQ(mcgraw_wong_name(IccForm::two_way_mixed_average), "ICC(C,k)");
}

TEST(Icc, RejectsUnusableInput) {
  EXPECT_THROW(intraclass_correlation(Eigen::MatrixXd::Ones(5, 1)), UserError);
  EXPECT_THROW(intraclass_correlation(Eigen::MatrixXd::Ones(1, 3)), UserError);
  EXPECT_THROW(intraclass_correlation(Eigen::MatrixXd::Constant(4, 3, 2.0)), UserError);
  IccOptions options;
  options.confidence = 1.5;
  EXPECT_FALSE(options.validate().empty());
  EXPECT_THROW(intraclass_correlation(shrout_fleiss_ratings(), options), UserError);
}

}  // namespace
}  // namespace frugal::measure
