#include "experiments/plan/power_law.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace frugal::plan {
namespace {

// Reference: scipy.optimize.curve_fit (scipy 1.10.1, Debian python3-scipy) on the model
// a·n^(−b) + c (Mukherjee et al. 2003; Figueroa et al. 2012, BMC Med Inform Decis Mak 12:8) with
// p0 = (1, 0.3, 0) and maxfev = 20000 on the fixed points below. Solvers stop at slightly
// different points, so parameters are compared to a relative 1e-4 (common practice, no source).
const std::vector<double> kN = {25, 50, 100, 200, 400, 800};
const std::vector<double> kObserved = {0.4480, 0.3310, 0.2510, 0.1890, 0.1510, 0.1220};
const PowerLaw kScipyStart{1.0, 0.3, 0.0};

void expect_relative(double actual, double expected, double tolerance) {
  EXPECT_NEAR(actual, expected, tolerance * std::abs(expected)) << "expected " << expected;
}

TEST(PowerLaw, NoiseFreeDataGiveTheirParametersBack) {
  // curve_fit on the noise-free points: y0 = 2n^(−0.5) + 0.05 is fitted to (2.0, 0.5, 0.05) to machine precision.
  std::vector<double> y;
  for (double n : kN) y.push_back(2.0 * std::pow(n, -0.5) + 0.05);
  const PowerLawFit fit = fit_power_law(kN, y, {}, &kScipyStart);
  ASSERT_TRUE(fit.converged);
  EXPECT_FALSE(fit.floor_held_at_zero);
  expect_relative(fit.curve.a, 2.0, 1e-8);
  expect_relative(fit.curve.b, 0.5, 1e-8);
  expect_relative(fit.curve.c, 0.05, 1e-8);
}

TEST(PowerLaw, MatchesCurveFitOnTheObservedCurve) {
  // curve_fit on the observed points: a = 2.009569, b = 0.505551, c = 0.053266,
  // SSR = 8.962e-6.
  const PowerLawFit fit = fit_power_law(kN, kObserved, {}, &kScipyStart);
  ASSERT_TRUE(fit.converged);
  expect_relative(fit.curve.a, 2.009569, 1e-4);
  expect_relative(fit.curve.b, 0.505551, 1e-4);
  expect_relative(fit.curve.c, 0.053266, 1e-4);
  expect_relative(fit.weighted_ssr, 8.962e-6, 1e-3);
  // Extrapolations of the same fit: err(1600) = 0.10149, err(5000) = 0.08037, and err <= 0.10 at
  // n = 1702.4.
  expect_relative(fit.curve(1600.0), 0.10149, 1e-4);
  expect_relative(fit.curve(5000.0), 0.08037, 1e-4);
  expect_relative(fit.curve.hours_to_reach(0.10), 1702.4, 1e-3);
}

TEST(PowerLaw, TheSameOptimumFromTheDataStartsAlone) {
  // curve_fit reaches the same optimum from several starting points (checked with scipy 1.10.1).
  const PowerLawFit fit = fit_power_law(kN, kObserved);
  ASSERT_TRUE(fit.converged);
  expect_relative(fit.curve.a, 2.009569, 1e-4);
  expect_relative(fit.curve.b, 0.505551, 1e-4);
  expect_relative(fit.curve.c, 0.053266, 1e-4);
}

TEST(PowerLaw, FigueroaWeightsMatchCurveFitWithSigma) {
  // curve_fit with sigma = 1/sqrt(n/Σn), i.e. weights n/Σn:
  // a = 2.045211, b = 0.512154, c = 0.055367.
  const std::vector<double> weights = figueroa_weights(kN);
  double total = 0.0;
  for (double w : weights) total += w;
  EXPECT_NEAR(total, 1.0, 1e-15);
  const PowerLawFit fit = fit_power_law(kN, kObserved, weights, &kScipyStart);
  ASSERT_TRUE(fit.converged);
  expect_relative(fit.curve.a, 2.045211, 1e-4);
  expect_relative(fit.curve.b, 0.512154, 1e-4);
  expect_relative(fit.curve.c, 0.055367, 1e-4);
}

TEST(PowerLaw, AFloorBelowZeroIsHeldAtZero) {
  // Data that fall faster than any power law with a floor >= 0 (from memory: a pure power law
  // minus a constant): the free fit puts c below 0, which no error can have.
  std::vector<double> y;
  for (double n : kN) y.push_back(3.0 * std::pow(n, -0.3) - 0.3);
  const PowerLawFit free_fit = fit_power_law(kN, y, {}, &kScipyStart);
  EXPECT_TRUE(free_fit.converged);
  EXPECT_TRUE(free_fit.floor_held_at_zero);
  EXPECT_EQ(free_fit.curve.c, 0.0);
  EXPECT_GT(free_fit.curve.a, 0.0);
  EXPECT_GT(free_fit.curve.b, 0.3);  // the fall must be steeper without the negative floor
}

TEST(PowerLaw, HoursToReachInvertsTheCurveAndNeverCrossesTheFloor) {
  const PowerLaw curve{2.0, 0.5, 0.05};
  // 2·h^(−0.5) + 0.05 = 0.25 at h = (2 / 0.2)^2 = 100 (arithmetic).
  EXPECT_NEAR(curve.hours_to_reach(0.25), 100.0, 1e-9);
  EXPECT_NEAR(curve(curve.hours_to_reach(0.1)), 0.1, 1e-12);
  EXPECT_TRUE(std::isinf(curve.hours_to_reach(0.05)));
  EXPECT_TRUE(std::isinf(curve.hours_to_reach(0.01)));
  EXPECT_TRUE(std::isinf((PowerLaw{2.0, -0.1, 0.0}).hours_to_reach(0.5)));  // a curve that rises
}

}  // namespace
}  // namespace frugal::plan
