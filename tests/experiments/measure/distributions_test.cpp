#include "experiments/measure/distributions.h"

#include <gtest/gtest.h>

namespace frugal::measure {
namespace {

// All expected values: scipy 1.10 (scipy.stats / scipy.special), printed with repr().
TEST(Distributions, IncompleteBetaMatchesScipy) {
  EXPECT_NEAR(regularized_incomplete_beta(2.5, 7.0, 0.3), 0.6412224629717214, 1e-12);  // stats.beta.cdf(0.3, 2.5, 7)
  EXPECT_NEAR(regularized_incomplete_beta(0.5, 0.5, 0.999), 0.9798649583666235, 1e-12);  // stats.beta.cdf(0.999, .5, .5)
}

TEST(Distributions, IncompleteGammaMatchesScipy) {
  EXPECT_NEAR(regularized_lower_gamma(3.5, 10.0), 0.9944303169270544, 1e-12);   // special.gammainc(3.5, 10)
  EXPECT_NEAR(regularized_lower_gamma(0.5, 0.01), 0.11246291601828491, 1e-12);  // special.gammainc(0.5, 0.01)
}

TEST(Distributions, QuantilesMatchScipy) {
  EXPECT_NEAR(f_quantile(0.975, 5, 18), 3.381967805875243, 1e-9);        // stats.f.ppf(0.975, 5, 18)
  EXPECT_NEAR(f_quantile(0.975, 18, 5), 6.361883204654353, 1e-9);        // stats.f.ppf(0.975, 18, 5)
  EXPECT_NEAR(f_quantile(0.99, 3.7, 120.5), 3.597176995533153, 1e-9);    // stats.f.ppf(0.99, 3.7, 120.5)
  EXPECT_NEAR(student_t_quantile(0.975, 16), 2.1199052992210112, 1e-9);  // stats.t.ppf(0.975, 16)
  EXPECT_NEAR(student_t_quantile(0.001, 3.5), -8.315567604516295, 1e-8); // stats.t.ppf(0.001, 3.5)
  EXPECT_NEAR(chi_squared_quantile(0.025, 17), 7.564186449577567, 1e-9); // stats.chi2.ppf(0.025, 17)
  EXPECT_NEAR(chi_squared_quantile(0.975, 17), 30.19100912163982, 1e-9); // stats.chi2.ppf(0.975, 17)
  EXPECT_NEAR(chi_squared_quantile(0.5, 0.7), 0.21473897172368658, 1e-9);  // stats.chi2.ppf(0.5, 0.7)
  EXPECT_NEAR(normal_quantile(0.975), 1.959963984540054, 1e-12);         // stats.norm.ppf(0.975)
  EXPECT_NEAR(normal_quantile(1e-10), -6.361340902404056, 1e-9);         // stats.norm.ppf(1e-10)
}

TEST(Distributions, SurvivalKeepsSmallPValues) {
  // stats.f.sf(11.0272479564, 5, 15)
  EXPECT_NEAR(f_survival(11.0272479564, 5, 15) / 0.00013456651648456125, 1.0, 1e-8);
}

TEST(Distributions, QuantileInvertsDistribution) {
  // Identity, no source needed.
  for (const double p : {0.01, 0.2, 0.5, 0.8, 0.999}) {
    EXPECT_NEAR(f_cdf(f_quantile(p, 3, 11), 3, 11), p, 1e-12);
    EXPECT_NEAR(student_t_cdf(student_t_quantile(p, 7), 7), p, 1e-12);
    EXPECT_NEAR(chi_squared_cdf(chi_squared_quantile(p, 4.5), 4.5), p, 1e-12);
  }
}

}  // namespace
}  // namespace frugal::measure
