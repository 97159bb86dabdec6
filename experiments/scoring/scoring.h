#pragma once
// Scores a predictions table (predictions_table.h) against the exact truth of a phantom set:
// how well each predicted quantity recovers the true one, whether presence is told apart, and,
// where the table gives probability maps, voxel overlap and lesion-wise detection. Every
// statistic comes from the measure part (ICC, Bland-Altman, correlation, Dice, detection
// matching); this part only pairs rows with truth and pools the results.

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "corruptors/rater.h"
#include "experiments/measure/detection_matching.h"
#include "experiments/scoring/predictions_table.h"
#include "phantoms/image.h"
#include "phantoms/phantom_set_reader.h"

namespace frugal::scoring {

struct ScoreOptions {
  GradingOptions grading;                       // bins that turn the true affected fraction into the true grade
  double presence_threshold = 0.5;              // accuracy: a probability above it reads as "present"
  double map_threshold = 0.5;                   // probability maps: voxels above it are lesion
  measure::DetectionMatchingOptions detection;  // lesion-wise matching (IoU >= 0.1, full connectivity)
  double confidence = 0.95;                     // level of the ICC interval (Bland-Altman limits stay at 1.96 SD)
  std::string validate() const;                 // empty, or "<key> = <value>: <what is allowed>"
};

// Agreement of one predicted quantity with its truth over the rows that give a value for it.
// NaN marks a statistic the data cannot give (too few rows, a constant column); `notes` says why.
struct QuantityScore {
  std::string quantity;  // "count", "affected_fraction", "burden_mm3" or "grade"
  std::string truth;     // what it was compared with, e.g. "truth.csv count"
  int n = 0;
  double mean_truth = 0.0;
  double mean_predicted = 0.0;
  double mae = 0.0;   // mean |predicted - truth|
  double bias = 0.0;  // mean (predicted - truth)
  double rmse = 0.0;  // sqrt(mean (predicted - truth)^2)
  double pearson = 0.0;
  double spearman = 0.0;
  double icc = 0.0;        // ICC(A,1): two-way random, absolute agreement, single measurement
  double icc_lower = 0.0;  // its interval at ScoreOptions::confidence (F distribution)
  double icc_upper = 0.0;
  double limits_lower = 0.0;  // Bland-Altman limits of agreement, bias -/+ 1.96 SD of the differences
  double limits_upper = 0.0;
  double weighted_kappa = 0.0;  // grade only: Cohen's kappa with quadratic weights; NaN otherwise
  std::vector<std::string> notes;
};

struct PresenceScore {
  int n = 0;
  int present = 0;        // rows whose truth has a lesion (streaks: count > 0; voids: affected fraction > 0)
  double auc = 0.0;       // area under the ROC curve of presence_probability
  double accuracy = 0.0;  // at ScoreOptions::presence_threshold
  std::vector<std::string> notes;
};

struct MapScore {
  int images = 0;            // rows with a probability map, all scored
  int not_thresholded = 0;   // rows with a density or response map (not scored for overlap)
  double pooled_dice = 0.0;  // 2 sum|T and P| / (sum|T| + sum|P|) over every image (Dice 1945)
  double mean_dice = 0.0;    // mean of the per-image Dice (both empty counts as 1)
  int truth_lesions = 0;
  int predicted_lesions = 0;
  int true_positives = 0;
  int false_positives = 0;
  int false_negatives = 0;
  double recall = 0.0;     // TP / (TP + FN) over every image
  double precision = 0.0;  // TP / (TP + FP)
  double f1 = 0.0;
  std::vector<std::string> notes;
};

// Agreement of a quantity between the first acquisition and the rescans of the same subjects
// (Bland & Altman, BMJ 1996): within-subject SD and repeatability coefficient 2.77 s_w, with
// chi-squared intervals. NaN with a note when fewer than two subjects have every rescan.
struct RepeatabilityScore {
  std::string quantity;
  int subjects = 0;
  int acquisitions = 0;  // per subject: the first plus its rescans
  double within_subject_sd = 0.0;
  double coefficient = 0.0;
  double coefficient_lower = 0.0;
  double coefficient_upper = 0.0;
  std::vector<std::string> notes;
};

// Lesion overlap and detection of probability maps, pooled over images added one at a time, so
// that a large set is scored without holding every map.
class MapScoreAccumulator {
 public:
  explicit MapScoreAccumulator(const ScoreOptions& options) : options_(options) {}
  // `truth_labels` are the phantom's label codes (kLesion marks lesions); shapes must agree.
  void add_probability_map(const FloatImage& map, const LabelImage& truth_labels);
  void add_unthresholded_map() { ++score_.not_thresholded; }  // a density or response map
  MapScore finish() const;

 private:
  ScoreOptions options_;
  MapScore score_;
  std::size_t intersection_ = 0, truth_voxels_ = 0, predicted_voxels_ = 0;
  double dice_sum_ = 0.0;
};

struct ScoreReport {
  std::string predictions_file;
  std::string phantom_set;
  int prediction_rows = 0;
  int truth_rows = 0;
  // Over the first acquisitions (rescan 0) only, so that a rescan is not counted as another subject.
  std::vector<QuantityScore> quantities;  // in the order count, affected_fraction, burden_mm3, grade; those given
  std::vector<RepeatabilityScore> repeatability;  // per quantity, when the table has rescans
  std::optional<PresenceScore> presence;  // when the table has presence_probability
  std::optional<MapScore> maps;           // when the table has maps
  std::vector<std::string> ignored_columns;
  ScoreOptions options;
};

// Pairs every row with the truth row of its subject (and rescan; rescan 0 when the table has no
// rescan column). Throws UserError naming the predictions file and line for a subject the
// phantom set does not have, and naming the map file for a map that cannot be read or whose grid
// differs from the truth labels'.
ScoreReport score_predictions(const PredictionsTable& predictions, const PhantomSetIndex& truth,
                              const ScoreOptions& options = {});

// The building blocks, usable alone. `predicted[i]` and `truth[i]` are the same image.
QuantityScore score_quantity(const std::string& quantity, const std::vector<double>& predicted,
                             const std::vector<double>& truth, double confidence = 0.95);
// measurements[s] holds subject s's value at each acquisition (the first, then each rescan).
RepeatabilityScore score_repeatability(const std::string& quantity, const std::vector<std::vector<double>>& measurements,
                                       double confidence = 0.95);
// Area under the ROC curve: the Mann-Whitney statistic from average ranks, ties counting one
// half. `present` holds 0 or 1 per score. NaN when either class is empty.
double roc_auc(const std::vector<double>& scores, const std::vector<int>& present);

// Every field of the report, for `frugal score --json` and for programs.
nlohmann::json to_json(const ScoreReport& report);

}  // namespace frugal::scoring
