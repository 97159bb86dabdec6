#include "experiments/scoring/scoring.h"

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>
#include <map>

#include "corruptors/grade.h"
#include "experiments/measure/bland_altman.h"
#include "experiments/measure/correlation.h"
#include "experiments/measure/icc.h"
#include "experiments/measure/kappa.h"
#include "experiments/measure/overlap.h"
#include "experiments/measure/repeatability.h"
#include "frugal_version.h"
#include "phantoms/key_path.h"
#include "phantoms/nifti_io.h"
#include "phantoms/subject.h"
#include "phantoms/user_error.h"

namespace frugal::scoring {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string text(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%g", value);
  return buffer;
}

// Runs one statistic; a UserError (too few rows, a constant column) becomes NaN and a note.
void guarded(std::vector<std::string>& notes, const std::string& what, const std::function<void()>& compute,
             const std::function<void()>& on_failure) {
  try {
    compute();
  } catch (const UserError& error) {
    notes.push_back(what + ": " + error.what());
    on_failure();
  }
}

bool truth_present(const TruthRow& row) {
  return row.family == "voids" ? row.affected_fraction > 0.0 : row.count > 0.0;
}

// Voxels of `map` above `threshold` as a 0/1 mask on the map's grid.
LabelImage threshold_map(const FloatImage& map, double threshold) {
  LabelImage mask(map.geometry(), 0);
  for (std::size_t i = 0; i < map.size(); ++i) mask.data()[i] = map.data()[i] > threshold ? 1 : 0;
  return mask;
}

LabelImage lesion_mask(const LabelImage& labels) {
  LabelImage mask(labels.geometry(), 0);
  for (std::size_t i = 0; i < labels.size(); ++i) mask.data()[i] = labels.data()[i] == kLesion ? 1 : 0;
  return mask;
}

MapScore score_maps(const PredictionsTable& predictions, const std::vector<const TruthRow*>& truth_rows,
                    const ScoreOptions& options) {
  MapScoreAccumulator accumulator(options);
  for (std::size_t r = 0; r < predictions.rows.size(); ++r) {
    const PredictionRow& row = predictions.rows[r];
    if (row.map.empty()) continue;
    // Every map named is read, density and response maps too, though they are not thresholded: a
    // missing, damaged or non-finite map is an error (docs/score.md), never a silent gap.
    const std::string path = predictions.map_path(row);
    FloatImage map;
    try {
      map = read_nifti_image(path);
    } catch (const UserError& error) {
      throw UserError(predictions.where(row) + ": map file: " + error.what());
    }
    if (row.map_kind != MapKind::probability) {
      accumulator.add_unthresholded_map();
      continue;
    }
    const LabelImage truth = read_nifti_labels(truth_rows[r]->labels_path);
    if (map.shape() != truth.shape())
      throw UserError(path + " (" + predictions.where(row) + "): the map is " + std::to_string(map.shape().x) + "x" +
                      std::to_string(map.shape().y) + "x" + std::to_string(map.shape().z) + " but the truth labels " +
                      truth_rows[r]->labels_path + " are " + std::to_string(truth.shape().x) + "x" +
                      std::to_string(truth.shape().y) + "x" + std::to_string(truth.shape().z) +
                      "; allowed: a map on the image's own grid");
    accumulator.add_probability_map(map, truth);
  }
  return accumulator.finish();
}

nlohmann::json number_or_null(double value) { return std::isfinite(value) ? nlohmann::json(value) : nlohmann::json(); }

}  // namespace

void MapScoreAccumulator::add_probability_map(const FloatImage& map, const LabelImage& truth_labels) {
  FRUGAL_CHECK(map.shape() == truth_labels.shape());
  const LabelImage truth = lesion_mask(truth_labels);
  const LabelImage predicted = threshold_map(map, options_.map_threshold);
  std::size_t both = 0, in_truth = 0, in_predicted = 0;
  for (std::size_t i = 0; i < truth.size(); ++i) {
    in_truth += truth.data()[i];
    in_predicted += predicted.data()[i];
    both += truth.data()[i] & predicted.data()[i];
  }
  intersection_ += both;
  truth_voxels_ += in_truth;
  predicted_voxels_ += in_predicted;
  dice_sum_ += measure::dice(both, in_truth, in_predicted);
  const measure::DetectionResult detection = measure::match_detections(truth, predicted, options_.detection);
  score_.truth_lesions += detection.truth_lesions;
  score_.predicted_lesions += detection.predicted_lesions;
  score_.true_positives += detection.true_positives;
  score_.false_positives += detection.false_positives;
  score_.false_negatives += detection.false_negatives;
  ++score_.images;
}

MapScore MapScoreAccumulator::finish() const {
  MapScore score = score_;
  if (score.not_thresholded > 0)
    score.notes.push_back(std::to_string(score.not_thresholded) +
                          " maps are density or response maps; overlap and detection need probability maps");
  if (score.images == 0) {
    score.pooled_dice = score.mean_dice = score.recall = score.precision = score.f1 = kNaN;
    score.notes.push_back("no probability maps to score");
    return score;
  }
  score.pooled_dice = measure::dice(intersection_, truth_voxels_, predicted_voxels_);
  score.mean_dice = dice_sum_ / score.images;
  // Pooled over images with the conventions of detection_matching.h (empty sides score 1).
  const double tp = score.true_positives;
  score.recall = score.truth_lesions == 0 ? 1.0 : tp / (tp + score.false_negatives);
  score.precision = score.predicted_lesions == 0 ? 1.0 : tp / (tp + score.false_positives);
  const double errors = score.false_positives + score.false_negatives;
  score.f1 = tp + errors == 0.0 ? 1.0 : 2.0 * tp / (2.0 * tp + errors);
  return score;
}

RepeatabilityScore score_repeatability(const std::string& quantity,
                                       const std::vector<std::vector<double>>& measurements, double confidence) {
  RepeatabilityScore score;
  score.quantity = quantity;
  score.within_subject_sd = score.coefficient = score.coefficient_lower = score.coefficient_upper = kNaN;
  std::vector<const std::vector<double>*> complete;
  for (const std::vector<double>& row : measurements) {
    bool finite = row.size() >= 2;
    for (double value : row) finite = finite && std::isfinite(value);
    if (finite) complete.push_back(&row);
  }
  if (complete.empty()) {
    score.notes.push_back("repeatability: no subject has a value at every acquisition");
    return score;
  }
  const std::size_t k = complete.front()->size();
  Eigen::MatrixXd matrix(static_cast<Eigen::Index>(complete.size()), static_cast<Eigen::Index>(k));
  for (std::size_t s = 0; s < complete.size(); ++s) {
    FRUGAL_CHECK(complete[s]->size() == k);
    for (std::size_t j = 0; j < k; ++j)
      matrix(static_cast<Eigen::Index>(s), static_cast<Eigen::Index>(j)) = (*complete[s])[j];
  }
  score.subjects = static_cast<int>(complete.size());
  score.acquisitions = static_cast<int>(k);
  guarded(
      score.notes, "repeatability",
      [&] {
        measure::RepeatabilityOptions options;
        options.confidence = confidence;
        const measure::RepeatabilityResult result = measure::repeatability(matrix, options);
        score.within_subject_sd = result.within_subject_sd;
        score.coefficient = result.repeatability_coefficient;
        score.coefficient_lower = result.repeatability_coefficient_lower;
        score.coefficient_upper = result.repeatability_coefficient_upper;
      },
      [] {});
  return score;
}

std::string ScoreOptions::validate() const {
  if (std::string error = key_path_under("grading", grading.validate()); !error.empty()) return error;
  if (!(presence_threshold > 0.0 && presence_threshold < 1.0))
    return "presence_threshold = " + text(presence_threshold) + ": allowed (0, 1)";
  if (!std::isfinite(map_threshold)) return "map_threshold = " + text(map_threshold) + ": must be a number";
  if (!(confidence > 0.0 && confidence < 1.0)) return "confidence = " + text(confidence) + ": allowed (0, 1)";
  return key_path_under("detection", detection.validate(2));
}

QuantityScore score_quantity(const std::string& quantity, const std::vector<double>& predicted,
                             const std::vector<double>& truth, double confidence) {
  FRUGAL_CHECK(predicted.size() == truth.size());
  QuantityScore score;
  score.quantity = quantity;
  score.n = static_cast<int>(predicted.size());
  score.weighted_kappa = kNaN;
  if (score.n == 0) {
    score.mean_truth = score.mean_predicted = score.mae = score.bias = score.rmse = kNaN;
    score.pearson = score.spearman = score.icc = score.icc_lower = score.icc_upper = kNaN;
    score.limits_lower = score.limits_upper = kNaN;
    score.notes.push_back("no row gives a value");
    return score;
  }
  double absolute = 0.0, signed_sum = 0.0, squares = 0.0, truth_sum = 0.0, predicted_sum = 0.0;
  for (std::size_t i = 0; i < predicted.size(); ++i) {
    const double difference = predicted[i] - truth[i];
    absolute += std::fabs(difference);
    signed_sum += difference;
    squares += difference * difference;
    truth_sum += truth[i];
    predicted_sum += predicted[i];
  }
  const double n = score.n;
  score.mae = absolute / n;
  score.bias = signed_sum / n;
  score.rmse = std::sqrt(squares / n);
  score.mean_truth = truth_sum / n;
  score.mean_predicted = predicted_sum / n;

  for (const auto kind : {measure::CorrelationKind::pearson, measure::CorrelationKind::spearman}) {
    double& target = kind == measure::CorrelationKind::pearson ? score.pearson : score.spearman;
    measure::CorrelationOptions correlation_options;
    correlation_options.kind = kind;
    guarded(
        score.notes, kind == measure::CorrelationKind::pearson ? "Pearson r" : "Spearman rho",
        [&] { target = measure::correlation(predicted, truth, correlation_options).coefficient; },
        [&] { target = kNaN; });
  }
  guarded(
      score.notes, "ICC(A,1)",
      [&] {
        Eigen::MatrixXd ratings(score.n, 2);
        for (int i = 0; i < score.n; ++i) {
          ratings(i, 0) = truth[static_cast<std::size_t>(i)];
          ratings(i, 1) = predicted[static_cast<std::size_t>(i)];
        }
        measure::IccOptions icc_options;
        icc_options.confidence = confidence;
        // A copy: get() returns a reference into the temporary result.
        const measure::IccEstimate icc =
            measure::intraclass_correlation(ratings, icc_options).get(measure::IccForm::two_way_random_single);
        score.icc = icc.value;
        score.icc_lower = icc.lower;
        score.icc_upper = icc.upper;
      },
      [&] { score.icc = score.icc_lower = score.icc_upper = kNaN; });
  guarded(
      score.notes, "Bland-Altman limits",
      [&] {
        const measure::BlandAltmanResult limits = measure::bland_altman(predicted, truth);
        score.limits_lower = limits.lower_limit;
        score.limits_upper = limits.upper_limit;
      },
      [&] { score.limits_lower = score.limits_upper = kNaN; });
  return score;
}

double roc_auc(const std::vector<double>& scores, const std::vector<int>& present) {
  FRUGAL_CHECK(scores.size() == present.size());
  const std::vector<double> ranks = measure::average_ranks(scores);
  double positives = 0.0, rank_sum = 0.0;
  for (std::size_t i = 0; i < scores.size(); ++i) {
    if (present[i] == 0) continue;
    positives += 1.0;
    rank_sum += ranks[i];
  }
  const double negatives = static_cast<double>(scores.size()) - positives;
  if (positives == 0.0 || negatives == 0.0) return kNaN;
  // Mann-Whitney U of the positives over the negatives, divided by the number of pairs.
  return (rank_sum - positives * (positives + 1.0) / 2.0) / (positives * negatives);
}

ScoreReport score_predictions(const PredictionsTable& predictions, const PhantomSetIndex& truth,
                              const ScoreOptions& options) {
  if (const std::string error = options.validate(); !error.empty()) throw UserError("score: " + error);
  ScoreReport report;
  report.predictions_file = predictions.source;
  report.phantom_set = truth.folder();
  report.prediction_rows = static_cast<int>(predictions.rows.size());
  report.truth_rows = static_cast<int>(truth.rows().size());
  report.ignored_columns = predictions.ignored_columns;
  report.options = options;
  if (predictions.rows.empty()) throw UserError(predictions.source + ": the table has no rows to score");

  std::vector<const TruthRow*> truth_rows;
  for (const PredictionRow& row : predictions.rows) {
    const TruthRow* match = truth.find(row.subject, row.rescan);
    if (match == nullptr)
      throw UserError(
          predictions.where(row) + ": subject " + std::to_string(row.subject) + ", rescan " +
          std::to_string(row.rescan) + " is not in " + truth.truth_file() +
          "; allowed: subjects of that phantom set (score each table against the set its images come from)");
    truth_rows.push_back(match);
  }

  // One quantity: the rows that give a value, paired with their truth.
  const auto quantity = [&](const std::string& name, const std::string& truth_name, double PredictionRow::*field,
                            const std::function<double(const TruthRow&)>& truth_of) {
    std::vector<double> predicted, actual;
    for (std::size_t r = 0; r < predictions.rows.size(); ++r) {
      const double value = predictions.rows[r].*field;
      if (std::isnan(value) || predictions.rows[r].rescan > 0) continue;
      predicted.push_back(value);
      actual.push_back(truth_of(*truth_rows[r]));
    }
    QuantityScore score = score_quantity(name, predicted, actual, options.confidence);
    score.truth = truth_name;
    return score;
  };
  if (predictions.has_count)
    report.quantities.push_back(
        quantity("count", "truth.csv count", &PredictionRow::count, [](const TruthRow& t) { return t.count; }));
  if (predictions.has_affected_fraction)
    report.quantities.push_back(quantity("affected_fraction", "truth.csv affected_fraction",
                                         &PredictionRow::affected_fraction,
                                         [](const TruthRow& t) { return t.affected_fraction; }));
  if (predictions.has_burden_mm3)
    report.quantities.push_back(quantity("burden_mm3", "truth.csv burden_mm3", &PredictionRow::burden_mm3,
                                         [](const TruthRow& t) { return t.burden_mm3; }));
  if (predictions.has_grade) {
    std::string edges;
    for (double edge : options.grading.bin_edges) edges += (edges.empty() ? "" : ", ") + text(edge);
    QuantityScore score =
        quantity("grade", "bin of truth.csv affected_fraction, upper bin edges [" + edges + "]", &PredictionRow::grade,
                 [&](const TruthRow& t) {
                   return static_cast<double>(grade_of_fraction(t.affected_fraction, options.grading));
                 });
    std::vector<double> predicted, actual, categories;
    bool whole = true;
    for (std::size_t r = 0; r < predictions.rows.size(); ++r) {
      const double value = predictions.rows[r].grade;
      if (std::isnan(value) || predictions.rows[r].rescan > 0) continue;
      whole = whole && value == std::floor(value) && value >= 0.0 && value < options.grading.bins();
      predicted.push_back(value);
      actual.push_back(grade_of_fraction(truth_rows[r]->affected_fraction, options.grading));
    }
    for (int bin = 0; bin < options.grading.bins(); ++bin) categories.push_back(bin);
    if (!predicted.empty() && !whole) {
      score.notes.push_back("weighted kappa: the predicted grades are not all bin indices 0.." +
                            std::to_string(options.grading.bins() - 1));
    } else if (!predicted.empty()) {
      measure::CohenKappaOptions kappa_options;
      kappa_options.weights = measure::KappaWeights::quadratic;
      guarded(
          score.notes, "weighted kappa",
          [&] { score.weighted_kappa = measure::cohen_kappa(predicted, actual, categories, kappa_options).kappa; },
          [&] { score.weighted_kappa = kNaN; });
    }
    report.quantities.push_back(std::move(score));
  }

  if (predictions.has_presence_probability) {
    PresenceScore presence;
    std::vector<double> scores;
    std::vector<int> present;
    int correct = 0;
    for (std::size_t r = 0; r < predictions.rows.size(); ++r) {
      const double probability = predictions.rows[r].presence_probability;
      if (std::isnan(probability) || predictions.rows[r].rescan > 0) continue;
      const int actual = truth_present(*truth_rows[r]) ? 1 : 0;
      scores.push_back(probability);
      present.push_back(actual);
      presence.present += actual;
      correct += (probability > options.presence_threshold ? 1 : 0) == actual ? 1 : 0;
    }
    presence.n = static_cast<int>(scores.size());
    presence.accuracy = presence.n > 0 ? static_cast<double>(correct) / presence.n : kNaN;
    presence.auc = roc_auc(scores, present);
    if (presence.n == 0)
      presence.notes.push_back("no row gives a presence probability");
    else if (std::isnan(presence.auc))
      presence.notes.push_back("AUC: needs images with and without lesions; all " + std::to_string(presence.n) +
                               (presence.present == 0 ? " have none" : " have lesions"));
    report.presence = presence;
  }

  if (predictions.has_map) report.maps = score_maps(predictions, truth_rows, options);

  // Rescans: each subject's values at every acquisition it has in the table.
  bool has_rescans = false;
  for (const PredictionRow& row : predictions.rows) has_rescans = has_rescans || row.rescan > 0;
  if (has_rescans) {
    const std::vector<std::pair<std::string, double PredictionRow::*>> fields{
        {"count", &PredictionRow::count},
        {"affected_fraction", &PredictionRow::affected_fraction},
        {"burden_mm3", &PredictionRow::burden_mm3},
        {"grade", &PredictionRow::grade},
        {"presence_probability", &PredictionRow::presence_probability}};
    for (const auto& [name, field] : fields) {
      std::map<int, std::map<int, double>> by_subject;
      bool any = false;
      for (const PredictionRow& row : predictions.rows) {
        by_subject[row.subject][row.rescan] = row.*field;
        any = any || !std::isnan(row.*field);
      }
      if (!any) continue;
      std::size_t acquisitions = 0;
      for (const auto& [subject, values] : by_subject) acquisitions = std::max(acquisitions, values.size());
      std::vector<std::vector<double>> measurements;
      for (const auto& [subject, values] : by_subject) {
        if (values.size() != acquisitions) continue;  // a subject without every rescan
        std::vector<double>& row = measurements.emplace_back();
        for (const auto& [rescan, value] : values) row.push_back(value);
      }
      report.repeatability.push_back(score_repeatability(name, measurements, options.confidence));
    }
  }
  return report;
}

nlohmann::json to_json(const ScoreReport& report) {
  using nlohmann::json;
  json out;
  out["tool"] = "frugal";
  out["version"] = kVersion;
  out["schema_version"] = kOutputSchemaVersion;
  out["kind"] = "score";
  out["predictions"] = report.predictions_file;
  out["phantom_set"] = report.phantom_set;
  out["prediction_rows"] = report.prediction_rows;
  out["truth_rows"] = report.truth_rows;
  out["ignored_columns"] = report.ignored_columns;
  out["options"] = {{"grade_bin_edges", report.options.grading.bin_edges},
                    {"presence_threshold", report.options.presence_threshold},
                    {"map_threshold", report.options.map_threshold},
                    {"detection_minimum_iou", report.options.detection.minimum_iou},
                    {"detection_connectivity", report.options.detection.connectivity.connectivity},
                    {"confidence", report.options.confidence}};
  json quantities = json::object();
  for (const QuantityScore& q : report.quantities) {
    json entry = {{"truth", q.truth},
                  {"n", q.n},
                  {"mean_truth", number_or_null(q.mean_truth)},
                  {"mean_predicted", number_or_null(q.mean_predicted)},
                  {"mae", number_or_null(q.mae)},
                  {"bias", number_or_null(q.bias)},
                  {"rmse", number_or_null(q.rmse)},
                  {"pearson_r", number_or_null(q.pearson)},
                  {"spearman_rho", number_or_null(q.spearman)},
                  {"icc_a1", number_or_null(q.icc)},
                  {"icc_a1_lower", number_or_null(q.icc_lower)},
                  {"icc_a1_upper", number_or_null(q.icc_upper)},
                  {"bland_altman_bias", number_or_null(q.bias)},
                  {"bland_altman_lower_limit", number_or_null(q.limits_lower)},
                  {"bland_altman_upper_limit", number_or_null(q.limits_upper)},
                  {"notes", q.notes}};
    if (q.quantity == "grade") entry["weighted_kappa_quadratic"] = number_or_null(q.weighted_kappa);
    quantities[q.quantity] = entry;
  }
  out["quantities"] = quantities;
  json repeatability = json::object();
  for (const RepeatabilityScore& r : report.repeatability)
    repeatability[r.quantity] = {{"subjects", r.subjects},
                                 {"acquisitions", r.acquisitions},
                                 {"within_subject_sd", number_or_null(r.within_subject_sd)},
                                 {"repeatability_coefficient", number_or_null(r.coefficient)},
                                 {"repeatability_coefficient_lower", number_or_null(r.coefficient_lower)},
                                 {"repeatability_coefficient_upper", number_or_null(r.coefficient_upper)},
                                 {"notes", r.notes}};
  if (!report.repeatability.empty()) out["repeatability"] = repeatability;
  if (report.presence) {
    const PresenceScore& p = *report.presence;
    out["presence"] = {{"n", p.n},
                       {"present", p.present},
                       {"auc", number_or_null(p.auc)},
                       {"accuracy", number_or_null(p.accuracy)},
                       {"notes", p.notes}};
  }
  if (report.maps) {
    const MapScore& m = *report.maps;
    out["maps"] = {{"images", m.images},
                   {"not_thresholded", m.not_thresholded},
                   {"pooled_dice", number_or_null(m.pooled_dice)},
                   {"mean_dice", number_or_null(m.mean_dice)},
                   {"truth_lesions", m.truth_lesions},
                   {"predicted_lesions", m.predicted_lesions},
                   {"true_positives", m.true_positives},
                   {"false_positives", m.false_positives},
                   {"false_negatives", m.false_negatives},
                   {"lesion_recall", number_or_null(m.recall)},
                   {"lesion_precision", number_or_null(m.precision)},
                   {"lesion_f1", number_or_null(m.f1)},
                   {"notes", m.notes}};
  }
  out["caution"] =
      "Scores on synthetic phantoms: they guide the choice of a labelling plan and a method; they do not "
      "validate a method for clinical use or replace a pilot on real data.";
  return out;
}

}  // namespace frugal::scoring
