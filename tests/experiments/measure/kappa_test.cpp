#include "experiments/measure/kappa.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

const std::vector<double> kGrades{0, 1, 2, 3};

Eigen::MatrixXd matrix(int rows, int cols, std::initializer_list<double> values) {
  Eigen::MatrixXd m(rows, cols);
  auto it = values.begin();
  for (int i = 0; i < rows; ++i) {
    for (int j = 0; j < cols; ++j) m(i, j) = *it++;
  }
  return m;
}

CohenKappaOptions weighted(KappaWeights weights) {
  CohenKappaOptions options;
  options.weights = weights;
  return options;
}

TEST(CohenKappa, SmallPairMatchesSklearn) {
  const std::vector<double> a{0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 2, 3, 3, 3, 3, 0, 1, 2, 3};
  const std::vector<double> b{0, 0, 1, 1, 1, 2, 0, 2, 2, 3, 1, 2, 3, 3, 2, 3, 1, 1, 2, 2};
  // sklearn.metrics.cohen_kappa_score(a, b, weights=..., labels=[0,1,2,3]) [C]; exact rationals.
  EXPECT_NEAR(cohen_kappa(a, b, kGrades).kappa, 17.0 / 37.0, 1e-12);
  EXPECT_NEAR(cohen_kappa(a, b, kGrades, weighted(KappaWeights::linear)).kappa, 147.0 / 227.0, 1e-12);
  EXPECT_NEAR(cohen_kappa(a, b, kGrades, weighted(KappaWeights::quadratic)).kappa, 21.0 / 26.0, 1e-12);
  // sklearn.metrics.confusion_matrix(a, b, labels=[0,1,2,3]) [C].
  EXPECT_EQ(cohen_kappa(a, b, kGrades).confusion, matrix(4, 4, {2, 2, 0, 0, 1, 3, 1, 0, 0, 1, 4, 1, 0, 0, 2, 3}));
}

TEST(CohenKappa, SkinConditionTable) {
  // SAS/STAT PROC FREQ "Skin Condition Data" (two dermatologists, 4 ordered grades); kappa
  // values computed with sklearn and a numpy re-implementation of Cohen (1968) [C].
  const Eigen::MatrixXd skin = matrix(4, 4, {10, 4, 1, 0, 5, 10, 12, 2, 2, 4, 12, 5, 0, 2, 6, 13});
  EXPECT_NEAR(cohen_kappa_from_table(skin).kappa, 0.3448753463, 1e-9);
  EXPECT_NEAR(cohen_kappa_from_table(skin, weighted(KappaWeights::linear)).kappa, 0.5081600715, 1e-9);
  EXPECT_NEAR(cohen_kappa_from_table(skin, weighted(KappaWeights::quadratic)).kappa, 0.6607228916, 1e-9);
}

TEST(CohenKappa, UnusedGradeKeepsWeightSpacing) {
  // sklearn cohen_kappa_score with labels=[0,1,2,3] [C]; without the full list sklearn gives
  // 0.5862 / 0.7273 because grade 2 is never used (sklearn builds weights from the labels it finds).
  const std::vector<double> a{0, 0, 1, 1, 3, 3, 3, 0};
  const std::vector<double> b{0, 1, 1, 3, 3, 1, 3, 0};
  EXPECT_NEAR(cohen_kappa(a, b, kGrades).kappa, 0.4418604651162791, 1e-12);
  EXPECT_NEAR(cohen_kappa(a, b, kGrades, weighted(KappaWeights::linear)).kappa, 0.5454545454545454, 1e-12);
  EXPECT_NEAR(cohen_kappa(a, b, kGrades, weighted(KappaWeights::quadratic)).kappa, 0.6538461538461539, 1e-12);
}

TEST(CohenKappa, StandardErrorsMatchSasPrintout) {
  // SAS PROC FREQ printout for the 3x3 table [[0,4,1],[0,8,0],[0,1,5]], as recorded in the
  // statsmodels test suite (statsmodels/stats/tests/test_inter_rater.py); printed to 4 decimals.
  const Eigen::MatrixXd table = matrix(3, 3, {0, 4, 1, 0, 8, 0, 0, 1, 5});
  const CohenKappaResult simple = cohen_kappa_from_table(table);
  EXPECT_NEAR(simple.kappa, 0.4842, 5e-5);
  EXPECT_NEAR(simple.standard_error, 0.1380, 5e-5);
  EXPECT_NEAR(simple.lower, 0.2137, 5e-5);
  EXPECT_NEAR(simple.upper, 0.7547, 5e-5);
  EXPECT_NEAR(simple.null_standard_error, 0.1484, 5e-5);
  EXPECT_NEAR(simple.z, 3.2626, 5e-5);
  EXPECT_NEAR(simple.p_value, 0.0011, 5e-5);
  // Same source, weighted kappa with scores 0,1,2 (Cicchetti-Allison = linear).
  const CohenKappaResult linear = cohen_kappa_from_table(table, weighted(KappaWeights::linear));
  EXPECT_NEAR(linear.kappa, 0.4701, 5e-5);
  EXPECT_NEAR(linear.standard_error, 0.1457, 5e-5);
  EXPECT_NEAR(linear.lower, 0.1845, 5e-5);
  EXPECT_NEAR(linear.upper, 0.7558, 5e-5);
  EXPECT_NEAR(linear.null_standard_error, 0.1426, 5e-5);
  EXPECT_NEAR(linear.z, 3.2971, 5e-5);
}

TEST(CohenKappa, RejectsRatingOutsideCategories) {
  EXPECT_THROW(cohen_kappa({0, 1, 5}, {0, 1, 1}, kGrades), UserError);
  EXPECT_THROW(cohen_kappa({0, 1}, {0}, kGrades), UserError);
  EXPECT_THROW(cohen_kappa({2, 2, 2}, {2, 2, 2}, kGrades), UserError);  // chance agreement 1
}

// Fleiss (1971) psychiatric diagnoses, 30 subjects x 6 raters x 5 categories: the `diagnoses`
// data of the R irr package, as transcribed in statsmodels' test_inter_rater.py.
Eigen::MatrixXd fleiss_diagnoses() {
  return matrix(30, 6, {4, 4, 4, 4, 4, 4, 2, 2, 2, 5, 5, 5, 2, 3, 3, 3, 3, 5, 5, 5, 5, 5, 5, 5,
                        2, 2, 2, 4, 4, 4, 1, 1, 3, 3, 3, 3, 3, 3, 3, 3, 5, 5, 1, 1, 3, 3, 3, 4,
                        1, 1, 4, 4, 4, 4, 5, 5, 5, 5, 5, 5, 1, 4, 4, 4, 4, 4, 1, 2, 4, 4, 4, 4,
                        2, 2, 2, 3, 3, 3, 1, 4, 4, 4, 4, 4, 2, 2, 4, 4, 4, 5, 3, 3, 3, 3, 3, 5,
                        1, 1, 1, 4, 5, 5, 1, 1, 1, 1, 1, 2, 2, 2, 4, 4, 4, 4, 1, 3, 3, 5, 5, 5,
                        5, 5, 5, 5, 5, 5, 2, 4, 4, 4, 4, 4, 2, 2, 4, 5, 5, 5, 1, 1, 4, 4, 4, 4,
                        1, 4, 4, 4, 4, 5, 2, 2, 2, 2, 2, 4, 1, 1, 1, 1, 5, 5, 2, 2, 4, 4, 4, 4,
                        1, 3, 3, 3, 3, 3, 5, 5, 5, 5, 5, 5});
}

TEST(FleissKappa, PsychiatricDiagnosesExample) {
  const FleissKappaResult result = fleiss_kappa(fleiss_diagnoses(), {1, 2, 3, 4, 5});
  // irr::kappam.fleiss(diagnoses) output recorded in statsmodels' test_inter_rater.py:
  // Kappa = 0.4302445, z = 17.65183 (Fleiss 1971 reports 0.430).
  EXPECT_NEAR(result.kappa, 0.4302445, 1e-7);
  EXPECT_NEAR(result.z, 17.65183, 1e-5);
  EXPECT_EQ(result.subjects, 30);
  EXPECT_EQ(result.raters, 6);
  // Category totals 26, 26, 30, 55, 43 of 180 ratings (statsmodels test_aggregate_raters).
  EXPECT_NEAR(result.category_proportions[3], 55.0 / 180.0, 1e-12);
}

TEST(FleissKappa, CountTableExample) {
  // 10 subjects x 14 raters x 5 categories with kappa 0.210: the worked example of the
  // Wikipedia "Fleiss' kappa" article, as used in statsmodels' test_inter_rater.py (3 decimals).
  const Eigen::MatrixXd counts =
      matrix(10, 5, {0, 0, 0, 0, 14, 0, 2, 6, 4, 2, 0, 0, 3, 5, 6, 0, 3, 9, 2, 0, 2, 2, 8, 1, 1,
                     7, 7, 0, 0, 0, 3, 2, 6, 3, 0, 2, 5, 3, 2, 2, 6, 5, 2, 1, 0, 0, 2, 2, 3, 7});
  EXPECT_NEAR(fleiss_kappa_from_counts(counts).kappa, 0.210, 5e-4);
}

TEST(FleissKappa, RejectsUnequalRaterCounts) {
  EXPECT_THROW(fleiss_kappa_from_counts(matrix(2, 2, {2, 1, 1, 1})), UserError);
  EXPECT_THROW(fleiss_kappa(matrix(2, 2, {1, 1, 1, 1}), {1, 2}), UserError);  // one category used
}

}  // namespace
}  // namespace frugal::measure
