#include "experiments/measure/correlation.h"

#include <gtest/gtest.h>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

// Twelve pairs with ties in x (2, 2 and 4, 4, 4) and in y (3, 3 and 6, 6, 6).
const std::vector<double> kX{1, 2, 2, 3, 4, 4, 4, 5, 7, 6, 8, 9};
const std::vector<double> kY{2, 1, 3, 3, 5, 4, 6, 6, 6, 9, 8, 7};

TEST(Correlation, AverageRanksForTies) {
  // scipy.stats.rankdata(kX) [C].
  const std::vector<double> expected{1, 2.5, 2.5, 4, 6, 6, 6, 8, 10, 9, 11, 12};
  EXPECT_EQ(average_ranks(kX), expected);
}

TEST(Correlation, PearsonMatchesScipy) {
  const CorrelationResult result = correlation(kX, kY);
  // scipy.stats.pearsonr(kX, kY) [C].
  EXPECT_NEAR(result.coefficient, 0.8451635451496394, 1e-12);
  EXPECT_NEAR(result.p_value, 0.0005371812620143426, 1e-10);
  EXPECT_LT(result.lower, result.coefficient);
  EXPECT_GT(result.upper, result.coefficient);
}

TEST(Correlation, SpearmanMatchesScipy) {
  CorrelationOptions options;
  options.kind = CorrelationKind::spearman;
  const CorrelationResult result = correlation(kX, kY, options);
  // scipy.stats.spearmanr(kX, kY) [C].
  EXPECT_NEAR(result.coefficient, 0.905693950177936, 1e-12);
  EXPECT_NEAR(result.p_value, 5.00535887634655e-05, 1e-10);
}

TEST(Correlation, RejectsConstantOrShortInput) {
  EXPECT_THROW(correlation({1, 2, 3, 4}, {5, 5, 5, 5}), UserError);
  EXPECT_THROW(correlation({1, 2}, {3, 4}), UserError);
}

}  // namespace
}  // namespace frugal::measure
