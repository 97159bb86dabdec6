// frugal score: a predictions table (from frugal predict, or from any method that writes the
// documented columns) scored against a phantom set's exact truth.

#include <CLI/CLI.hpp>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "cli/commands.h"
#include "cli/option_keys.h"
#include "corruptors/rater_yaml.h"
#include "experiments/scoring/predictions_table.h"
#include "experiments/scoring/scoring.h"
#include "phantoms/folder_manifest.h"
#include "phantoms/phantom_set_reader.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::cli {
namespace {

struct ScoreArguments {
  std::string predictions;
  std::string phantoms;
  std::string json_file;
  std::string rater_file;
  scoring::ScoreOptions options;
  OptionKeys keys{"score"};  // which option sets which key, for messages
};

// Four significant digits: counts, fractions and mm^3 burdens share one table.
std::string cell(double value) {
  if (std::isnan(value)) return "n/a";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.4g", value);
  return buffer;
}

std::string padded(const std::string& text, std::size_t width, bool right = true) {
  if (text.size() >= width) return text;
  const std::string fill(width - text.size(), ' ');
  return right ? fill + text : text + fill;
}

// Three decimals for coefficients in [-1, 1].
std::string coefficient(double value) {
  if (std::isnan(value)) return "n/a";
  if (std::fabs(value) < 0.0005) value = 0.0;  // no "-0.000" for a rounding-level negative
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3f", value);
  return buffer;
}

std::string format_report(const scoring::ScoreReport& report) {
  std::string out = "scored " + std::to_string(report.prediction_rows) + " rows of " + report.predictions_file +
                    " against the truth of " + report.phantom_set + " (" + std::to_string(report.truth_rows) +
                    " rows)\n";
  if (!report.ignored_columns.empty()) {
    std::string names;
    for (const std::string& name : report.ignored_columns) names += (names.empty() ? "" : ", ") + name;
    out += "ignored columns the format does not know: " + names + "\n";
  }
  std::string notes, empty;
  std::string table;
  for (const scoring::QuantityScore& q : report.quantities) {
    if (q.n == 0) {  // a column of NA only: the method does not answer this quantity
      empty += (empty.empty() ? "" : ", ") + q.quantity;
      continue;
    }
    table += padded(q.quantity, 18, false) + padded(std::to_string(q.n), 6) + padded(cell(q.mae), 10) +
             padded(cell(q.bias), 10) + padded(cell(q.rmse), 10) + padded(coefficient(q.pearson), 9) +
             padded(coefficient(q.spearman), 9) + "  " +
             padded(coefficient(q.icc) + " [" + coefficient(q.icc_lower) + ", " + coefficient(q.icc_upper) + "]", 23,
                    false) +
             "[" + cell(q.limits_lower) + ", " + cell(q.limits_upper) + "]\n";
    for (const std::string& note : q.notes) notes += "  " + q.quantity + ": " + note + "\n";
    if (q.quantity == "grade")
      notes +=
          "  grade: true grade = " + q.truth + "; quadratic-weighted kappa " + coefficient(q.weighted_kappa) + "\n";
  }
  if (!table.empty())
    out += "\n" + padded("quantity", 18, false) + padded("n", 6) + padded("MAE", 10) + padded("bias", 10) +
           padded("RMSE", 10) + padded("Pearson", 9) + padded("Spearman", 9) + "  " +
           padded("ICC(A,1) [95% CI]", 23, false) + "Bland-Altman 95% limits\n" + table;
  if (!empty.empty()) out += "no row gives a value for: " + empty + "\n";
  if (report.presence && report.presence->n > 0) {
    const scoring::PresenceScore& p = *report.presence;
    out += "\npresence: AUC " + coefficient(p.auc) + ", accuracy " + coefficient(p.accuracy) + " at probability > " +
           cell(report.options.presence_threshold) + " (" + std::to_string(p.n) + " images, " +
           std::to_string(p.present) + " with lesions)\n";
    for (const std::string& note : p.notes) notes += "  presence: " + note + "\n";
  }
  if (report.maps) {
    const scoring::MapScore& m = *report.maps;
    if (m.images > 0) {
      out += "maps (map > " + cell(report.options.map_threshold) + " vs truth lesions, " + std::to_string(m.images) +
             " images): Dice " + coefficient(m.pooled_dice) + " pooled, " + coefficient(m.mean_dice) +
             " mean per image\n";
      out += "lesions: recall " + coefficient(m.recall) + ", precision " + coefficient(m.precision) + ", F1 " +
             coefficient(m.f1) + " (" + std::to_string(m.true_positives) + " of " + std::to_string(m.truth_lesions) +
             " found, " + std::to_string(m.false_positives) +
             " false; match at IoU >= " + cell(report.options.detection.minimum_iou) + ")\n";
    } else if (m.not_thresholded > 0) {
      out += "maps: " + std::to_string(m.not_thresholded) +
             " density or response maps, not scored for overlap (Dice and lesion matching need probability maps)\n";
    }
    if (m.images > 0)
      for (const std::string& note : m.notes) notes += "  maps: " + note + "\n";
  }
  if (!report.repeatability.empty()) {
    out += "\nrepeatability over rescans (first acquisitions above; Bland & Altman 1996):\n";
    for (const scoring::RepeatabilityScore& r : report.repeatability) {
      out += "  " + padded(r.quantity, 22, false) + "coefficient " + cell(r.coefficient) + " [" +
             cell(r.coefficient_lower) + ", " + cell(r.coefficient_upper) + "], within-subject SD " +
             cell(r.within_subject_sd) + " (" + std::to_string(r.subjects) + " subjects x " +
             std::to_string(r.acquisitions) + " acquisitions; truth repeats exactly)\n";
      for (const std::string& note : r.notes) notes += "  " + r.quantity + ": " + note + "\n";
    }
  }
  if (!notes.empty()) out += "\nnotes:\n" + notes;
  out += "\nScores on synthetic phantoms; they do not validate a method for clinical use.\n";
  return out;
}

// frugal predict records the fingerprint of each phantom set it read; a table from another set
// (another seed, size or scenario, same subject ids) would otherwise be scored without a word.
// A table without a predict manifest beside it (another method's) is checked by subject ids only.
void check_predictions_belong_to(const scoring::PredictionsTable& predictions, const std::string& phantoms) {
  const std::string folder = predictions.folder.empty() ? "." : predictions.folder;
  const std::filesystem::path manifest_file = std::filesystem::path(folder) / "manifest.json";
  std::error_code ignored;
  if (!std::filesystem::exists(manifest_file, ignored)) return;
  const nlohmann::json manifest =
      read_folder_manifest(folder, "predictions", "the folder frugal predict wrote, or a table alone");
  const auto sets = manifest.find("phantom_sets");
  if (sets == manifest.end() || !sets->is_array() || sets->empty()) return;  // images given as files
  const std::string fingerprint = phantom_set_fingerprint(phantoms);
  std::string folders;
  for (const nlohmann::json& set : *sets) {
    if (set.is_object() && set.value("fingerprint", std::string()) == fingerprint) return;
    folders += (folders.empty() ? "" : ", ") + (set.is_object() ? set.value("folder", std::string("?")) : "?");
  }
  throw UserError(predictions.source + ": predicted from the phantom set " + folders + ", not " + phantoms +
                  " (its truth.csv differs: another seed, size or scenario); allowed: the phantom set the images "
                  "came from");
}

// A folder frugal predict was killed in holds its maps/ (and perhaps the table) but no manifest,
// which predict writes last: refuse it as unfinished rather than score part of it or say only
// that the table is missing. A table alone, from another method, needs no manifest.
void refuse_unfinished_predict_folder(const std::string& predictions_file) {
  namespace fs = std::filesystem;
  const fs::path file(predictions_file);
  const fs::path folder = file.parent_path();
  std::error_code ignored;
  if (folder.empty() || !fs::is_directory(folder, ignored) || fs::exists(folder / "manifest.json", ignored)) return;
  const bool predict_folder = fs::is_directory(folder / "maps", ignored) ||
                              (file.filename() == "predictions.csv" && !fs::exists(file, ignored));
  if (predict_folder)
    read_folder_manifest(folder.string(), "predictions", "the folder frugal predict wrote, or a table alone");
}

void run_score(ScoreArguments& arguments) {
  if (!arguments.rater_file.empty()) arguments.options.grading = read_rater_file(arguments.rater_file).grading;
  if (const std::string error = arguments.options.validate(); !error.empty())
    throw UserError(arguments.keys.message(error));
  if (!arguments.json_file.empty())
    require_writable_output(arguments.json_file, OutputKind::file, "a new or regular file for the JSON report");
  refuse_unfinished_predict_folder(arguments.predictions);
  const scoring::PredictionsTable predictions = scoring::read_predictions_table(arguments.predictions);
  read_folder_manifest(arguments.phantoms, "phantom_set", "a phantom set folder (frugal phantoms)");
  const PhantomSetIndex truth = read_phantom_set(arguments.phantoms);
  check_predictions_belong_to(predictions, arguments.phantoms);
  const scoring::ScoreReport report = scoring::score_predictions(predictions, truth, arguments.options);
  if (!arguments.json_file.empty()) {
    WholeFile file(arguments.json_file);
    file.write(scoring::to_json(report).dump(2) + "\n");
    file.commit();
  }
  std::fputs(format_report(report).c_str(), stdout);
}

}  // namespace

void add_score_command(CLI::App& app) {
  auto arguments = std::make_shared<ScoreArguments>();
  scoring::ScoreOptions& o = arguments->options;
  CLI::App* command = app.add_subcommand(
      "score",
      "Score a predictions table (frugal predict's, or your own method's in the same columns) against a phantom "
      "set's exact truth: MAE, bias, RMSE, correlation, ICC and limits of agreement per quantity, presence AUC, "
      "and Dice and lesion-wise detection for probability maps (docs/score.md).");
  command->add_option("predictions", arguments->predictions, "Predictions table (predictions.csv)")->required();
  command->add_option("--phantoms", arguments->phantoms, "Phantom set folder whose truth.csv the rows refer to")
      ->required();
  command->add_option("--json", arguments->json_file, "Also write every number to this JSON file");
  command->add_option("--rater-file", arguments->rater_file,
                      "Rater YAML whose grading bins define the true grade (default: frugal's default bins)");
  OptionKeys& keys = arguments->keys;
  keys.add(command, "--presence-threshold", o.presence_threshold, "presence_threshold",
           "Accuracy: probability above it reads as present");
  keys.add(command, "--map-threshold", o.map_threshold, "map_threshold", "Probability maps: voxels above it are lesion");
  keys.add(command, "--minimum-iou", o.detection.minimum_iou, "detection.minimum_iou",
           "Lesion-wise matching: smallest overlap (IoU) of a found lesion with a true one");
  keys.add(command, "--confidence", o.confidence, "confidence", "Level of the ICC interval");
  keys.explain("grading", "grading bins come from --rater-file");
  command->callback([arguments] { run_score(*arguments); });
}

}  // namespace frugal::cli
