#include "experiments/scoring/scoring.h"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "phantoms/nifti_io.h"
#include "phantoms/subject.h"
#include "phantoms/truth_tables.h"
#include "phantoms/user_error.h"

namespace frugal::scoring {
namespace {

namespace fs = std::filesystem;

// The hand-made pairs behind the quantity checks.
const std::vector<double> kPredicted{1.0, 3.0, 2.0, 5.0, 4.5, 7.0};
const std::vector<double> kTruth{1.0, 2.0, 3.0, 4.0, 6.0, 6.0};

TEST(ScoreQuantity, MatchesNumpyAndScipyOnAHandMadeCase) {
  const QuantityScore score = score_quantity("count", kPredicted, kTruth);
  EXPECT_EQ(score.n, 6);
  // numpy: np.mean(np.abs(d)), d.mean(), np.sqrt(np.mean(d**2)) with d = predicted - truth.
  EXPECT_NEAR(score.mae, 0.9166666666666666, 1e-12);
  EXPECT_NEAR(score.bias, 0.08333333333333333, 1e-12);
  EXPECT_NEAR(score.rmse, 1.0206207261596576, 1e-12);
  // scipy.stats.pearsonr and scipy.stats.spearmanr (average ranks for the tie at 6).
  EXPECT_NEAR(score.pearson, 0.8640394297285593, 1e-12);
  EXPECT_NEAR(score.spearman, 0.8406680016960503, 1e-12);
  // ICC(2,1) by the Shrout & Fleiss (1979) formula (BMS - EMS) / (BMS + (k-1) EMS + k (JMS - EMS) / n),
  // mean squares computed in numpy on the 6 x 2 table [truth, predicted].
  EXPECT_NEAR(score.icc, 0.8821866163996233, 1e-10);
  // Its 95% interval by the Shrout & Fleiss (1979) / McGraw & Wong (1996) formula for ICC(2,1)
  // (Satterthwaite df v), with scipy.stats.f.ppf(0.975, n-1, v) and f.ppf(0.975, v, n-1); the same
  // numpy/scipy lines give 0.018786513374712044 / 0.7610843696489528 on the Shrout & Fleiss 6 x 4
  // example, as icc_test expects. Tolerance 1e-7 as there (F quantiles at non-integer df).
  EXPECT_NEAR(score.icc_lower, 0.3548192246618782, 1e-7);
  EXPECT_NEAR(score.icc_upper, 0.9827817549582165, 1e-7);
  // Bland & Altman (1999): bias -/+ 1.96 x the SD of the differences (ddof = 1), numpy.
  EXPECT_NEAR(score.limits_lower, -2.100696580991712, 1e-12);
  EXPECT_NEAR(score.limits_upper, 2.267363247658379, 1e-12);
  EXPECT_TRUE(score.notes.empty());
}

TEST(ScoreQuantity, UndefinedStatisticsAreNanWithANote) {
  // A constant prediction has no correlation (common practice, no source).
  const QuantityScore score = score_quantity("count", {2.0, 2.0, 2.0, 2.0}, {1.0, 2.0, 3.0, 4.0});
  EXPECT_NEAR(score.mae, 1.0, 1e-12);  // by hand: (1 + 0 + 1 + 2) / 4
  EXPECT_TRUE(std::isnan(score.pearson));
  EXPECT_TRUE(std::isnan(score.spearman));
  EXPECT_FALSE(score.notes.empty());
  const QuantityScore two = score_quantity("count", {1.0, 2.0}, {1.0, 3.0});
  EXPECT_TRUE(std::isnan(two.limits_lower));  // Bland-Altman needs 3 subjects
}

TEST(RocAuc, MatchesSklearnWithTies) {
  // sklearn.metrics.roc_auc_score([1,0,1,0,0,1,0], [0.9,0.2,0.6,0.6,0.4,0.8,0.1]) = 0.9583333333333333
  EXPECT_NEAR(roc_auc({0.9, 0.2, 0.6, 0.6, 0.4, 0.8, 0.1}, {1, 0, 1, 0, 0, 1, 0}), 0.9583333333333333, 1e-12);
  EXPECT_TRUE(std::isnan(roc_auc({0.1, 0.2}, {1, 1})));
}

// A tiny phantom set written by hand: 8 x 8 label images, truth.csv, and maps.
class ScorePredictions : public ::testing::Test {
 protected:
  void SetUp() override {
    // One folder per test: ctest runs the tests of this fixture in parallel.
    root_ = fs::path(::testing::TempDir()) /
            (std::string("score_predictions_") + ::testing::UnitTest::GetInstance()->current_test_info()->name());
    fs::remove_all(root_);
    fs::create_directories(root_ / "labels");
    fs::create_directories(root_ / "maps");
    Geometry geometry;
    geometry.shape = {8, 8, 1};
    // Subject 0: lesion A (x 1-2, y 1-2, 4 voxels) and lesion B (x 5-6, y 5, 2 voxels).
    LabelImage s0(geometry, kField);
    for (int y = 1; y <= 2; ++y)
      for (int x = 1; x <= 2; ++x) s0.at(x, y) = kLesion;
    s0.at(5, 5) = s0.at(6, 5) = kLesion;
    // Subject 1: no lesion, one round look-alike at (4, 4).
    LabelImage s1(geometry, kField);
    s1.at(4, 4) = kDotDistractor;
    // Subject 2: one lesion (x 3-4, y 3-4).
    LabelImage s2(geometry, kField);
    for (int y = 3; y <= 4; ++y)
      for (int x = 3; x <= 4; ++x) s2.at(x, y) = kLesion;
    write_nifti(s0, (root_ / "labels/subject_000000.nii.gz").string());
    write_nifti(s1, (root_ / "labels/subject_000001.nii.gz").string());
    write_nifti(s2, (root_ / "labels/subject_000002.nii.gz").string());
    write_nifti(s2, (root_ / "labels/subject_000003.nii.gz").string());
    write_nifti(s2, (root_ / "labels/subject_000004.nii.gz").string());

    // Maps: subject 0 finds A too large (x 1-2, y 1-3: 6 voxels), misses B and adds a false blob at
    // (6, 1); voxels exactly at 0.5 are not lesion. Subject 1 marks the look-alike. Subject 2 is exact.
    FloatImage m0(geometry, 0.1F), m1(geometry, 0.1F), m2(geometry, 0.0F);
    for (int y = 1; y <= 3; ++y)
      for (int x = 1; x <= 2; ++x) m0.at(x, y) = 0.9F;
    m0.at(6, 1) = 0.8F;
    m0.at(5, 5) = 0.5F;
    m1.at(4, 4) = 0.9F;
    for (int y = 3; y <= 4; ++y)
      for (int x = 3; x <= 4; ++x) m2.at(x, y) = 0.7F;
    write_nifti(m0, (root_ / "maps/m0.nii.gz").string());
    write_nifti(m1, (root_ / "maps/m1.nii.gz").string());
    write_nifti(m2, (root_ / "maps/m2.nii.gz").string());

    // Truth: counts 2, 0, 1, 3, 4; affected fractions 0, 0.02, 0.05, 0.3, 0.6 (grades 0, 1, 2, 4, 5
    // under the default bins).
    const double fractions[] = {0.0, 0.02, 0.05, 0.3, 0.6};
    const int counts[] = {2, 0, 1, 3, 4};
    std::string truth = csv_version_comment("phantom truth") + truth_csv_header();
    for (int s = 0; s < 5; ++s) {
      SubjectTruth row;
      row.subject = s;
      row.count = counts[s];
      row.affected_fraction = fractions[s];
      row.burden_mm3 = 10.0 * s;
      char name[64];
      std::snprintf(name, sizeof name, "subject_%06d.nii.gz", s);
      truth += truth_csv_row(row, std::string("images/") + name, std::string("labels/") + name);
    }
    std::ofstream(root_ / "truth.csv") << truth;
  }

  std::string write_predictions(const std::string& text) {
    const fs::path path = root_ / "predictions.csv";
    std::ofstream(path) << text;
    return path.string();
  }

  fs::path root_;
};

TEST_F(ScorePredictions, PoolsDiceAndLesionDetectionOverProbabilityMaps) {
  // Rows in another order than truth.csv; subject 3 gives no map.
  const std::string path = write_predictions(
      "subject,count,presence_probability,map,map_kind\n"
      "2,1,0.9,maps/m2.nii.gz,probability\n"
      "0,2,0.8,maps/m0.nii.gz,probability\n"
      "1,1,0.6,maps/m1.nii.gz,probability\n"
      "3,3,0.4,NA,NA\n");
  const ScoreReport report = score_predictions(read_predictions_table(path), read_phantom_set(root_.string()));
  ASSERT_TRUE(report.maps.has_value());
  const MapScore& maps = *report.maps;
  EXPECT_EQ(maps.images, 3);
  // By hand: intersections 4 + 0 + 4, truth voxels 6 + 0 + 4 (the look-alike is not a lesion),
  // predicted voxels 7 + 1 + 4, so Dice = 2 x 8 / (10 + 12) = 8/11 (Dice 1945).
  EXPECT_NEAR(maps.pooled_dice, 8.0 / 11.0, 1e-12);
  // Per image 8/13, 0 (a look-alike marked, no lesion) and 1: mean 7/13.
  EXPECT_NEAR(maps.mean_dice, 7.0 / 13.0, 1e-12);
  // Lesions by hand: A found (IoU 4/6 >= 0.1), B missed, the blob at (6, 1) and the look-alike are
  // false positives, subject 2's lesion is found: TP 2, FP 2, FN 1.
  EXPECT_EQ(maps.truth_lesions, 3);
  EXPECT_EQ(maps.predicted_lesions, 4);
  EXPECT_EQ(maps.true_positives, 2);
  EXPECT_EQ(maps.false_positives, 2);
  EXPECT_EQ(maps.false_negatives, 1);
  EXPECT_NEAR(maps.recall, 2.0 / 3.0, 1e-12);
  EXPECT_NEAR(maps.precision, 0.5, 1e-12);
  EXPECT_NEAR(maps.f1, 4.0 / 7.0, 1e-12);  // 2 TP / (2 TP + FP + FN)
  // Presence: truth present for subjects 0, 2, 3 (count > 0). Scores 0.8, 0.9, 0.4 against 0.6 for
  // the absent subject 1: sklearn.metrics.roc_auc_score([1,1,0,1], [0.9,0.8,0.6,0.4]) = 0.6667.
  ASSERT_TRUE(report.presence.has_value());
  EXPECT_NEAR(report.presence->auc, 2.0 / 3.0, 1e-12);
  // At probability > 0.5: subject 1 (0.6) and subject 3 (0.4) are wrong, so 2 of 4 (by hand).
  EXPECT_NEAR(report.presence->accuracy, 0.5, 1e-12);
  EXPECT_EQ(report.presence->present, 3);
  // Count pairs (1,1), (2,2), (1,0), (3,3): MAE 1/4, bias 1/4 (by hand).
  ASSERT_EQ(report.quantities.size(), 1U);
  EXPECT_EQ(report.quantities[0].n, 4);
  EXPECT_NEAR(report.quantities[0].mae, 0.25, 1e-12);
  EXPECT_NEAR(report.quantities[0].bias, 0.25, 1e-12);
}

TEST_F(ScorePredictions, GradesAreComparedWithTheBinOfTheTrueFraction) {
  const std::string path = write_predictions(
      "subject,rescan,grade,affected_fraction,my_notes\n"
      "0,0,0,0.01,a\n1,0,1,NA,b\n2,0,3,0.04,c\n3,0,4,0.2,d\n4,0,4,0.5,e\n");
  const ScoreReport report = score_predictions(read_predictions_table(path), read_phantom_set(root_.string()));
  ASSERT_EQ(report.quantities.size(), 2U);
  EXPECT_EQ(report.quantities[0].quantity, "affected_fraction");
  EXPECT_EQ(report.quantities[0].n, 4);  // the NA row is skipped
  // (|0.01-0| + |0.04-0.05| + |0.2-0.3| + |0.5-0.6|) / 4 = 0.055 (by hand).
  EXPECT_NEAR(report.quantities[0].mae, 0.055, 1e-12);
  const QuantityScore& grade = report.quantities[1];
  EXPECT_EQ(grade.quantity, "grade");
  // True grades 0, 1, 2, 4, 5 (grade_of_fraction with the default bins); predicted 0, 1, 3, 4, 4.
  EXPECT_NEAR(grade.mae, 0.4, 1e-12);  // numpy
  EXPECT_NEAR(grade.bias, 0.0, 1e-12);
  // sklearn.metrics.cohen_kappa_score(pred, truth, weights="quadratic", labels=[0,1,2,3,4,5]).
  EXPECT_NEAR(grade.weighted_kappa, 0.9342105263157895, 1e-12);
  EXPECT_EQ(report.ignored_columns, std::vector<std::string>{"my_notes"});
}

TEST_F(ScorePredictions, UnknownSubjectsAndBadMapsNameTheFileAndLine) {
  const std::string unknown = write_predictions("subject,count\n0,1\n9,2\n");
  try {
    score_predictions(read_predictions_table(unknown), read_phantom_set(root_.string()));
    FAIL() << "an unknown subject was accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("predictions.csv line 3"), std::string::npos) << error.what();
    EXPECT_NE(std::string(error.what()).find("subject 9"), std::string::npos) << error.what();
  }
  Geometry small;
  small.shape = {4, 4, 1};
  write_nifti(FloatImage(small, 0.0F), (root_ / "maps/small.nii.gz").string());
  const std::string wrong_grid = write_predictions("subject,map\n0,maps/small.nii.gz\n");
  try {
    score_predictions(read_predictions_table(wrong_grid), read_phantom_set(root_.string()));
    FAIL() << "a map on another grid was accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("small.nii.gz"), std::string::npos) << error.what();
  }
  const std::string missing_map = write_predictions("subject,map\n0,maps/none.nii.gz\n");
  EXPECT_THROW(score_predictions(read_predictions_table(missing_map), read_phantom_set(root_.string())), UserError);
}

TEST(ScoreRepeatability, MatchesTheBlandAltmanPeakFlowExample) {
  // Bland & Altman, Lancet 1986, peak expiratory flow, Wright meter first and second readings
  // (data as transcribed by the blandr R package). s_w = sqrt(sum d^2 / 2n) = 15.307 and the
  // repeatability coefficient 1.96 sqrt(2) s_w = 42.43, computed with numpy.
  const std::vector<double> first{494, 395, 516, 434, 476, 557, 413, 442, 650, 433, 417, 656, 267, 478, 178, 423, 427};
  const std::vector<double> second{490, 397, 512, 401, 470, 611, 415, 431, 638, 429, 420, 633, 275, 492, 165, 372, 421};
  std::vector<std::vector<double>> measurements;
  for (std::size_t i = 0; i < first.size(); ++i) measurements.push_back({first[i], second[i]});
  const RepeatabilityScore score = score_repeatability("pefr", measurements);
  EXPECT_EQ(score.subjects, 17);
  EXPECT_EQ(score.acquisitions, 2);
  EXPECT_NEAR(score.within_subject_sd, 15.307, 1e-3);
  EXPECT_NEAR(score.coefficient, 42.43, 1e-2);
  EXPECT_LT(score.coefficient_lower, score.coefficient);
  EXPECT_GT(score.coefficient_upper, score.coefficient);
  // A subject without every acquisition is left out, not padded.
  measurements.push_back({500.0, std::nan("")});
  EXPECT_EQ(score_repeatability("pefr", measurements).subjects, 17);
  // Nothing complete: n/a with a reason, not an exception.
  const RepeatabilityScore none = score_repeatability("pefr", {{1.0, std::nan("")}});
  EXPECT_TRUE(std::isnan(none.coefficient));
  EXPECT_FALSE(none.notes.empty());
}

}  // namespace
}  // namespace frugal::scoring
