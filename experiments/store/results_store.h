#pragma once
// The results store of a study: one SQLite file (results_schema/results_store_v1.sql) holding the
// resolved study, one row per finished or failed cell, and the cell's metric rows, per-subject
// predictions against truth, per-epoch training curve, the cost of every label it bought and a few
// example pictures for the report.
// Each cell is written in one transaction, so a run killed at any moment leaves every finished
// cell whole and no cell half-written. Torch-free; plain value types only.

#include <memory>
#include <set>
#include <string>
#include <vector>

namespace frugal::store {

// One number a cell measured on one held-out test set. NaN value (stored as NULL) means the data
// could not give it; `note` then says why ("n/a: constant column").
struct MetricRow {
  std::string test_set;  // "test", "rescan", "decorrelated"
  std::string quantity;  // "count", "affected_fraction", "burden_mm3", "grade", "presence", "map"
  std::string metric;    // "mae", "bias", "rmse", "pearson", "spearman", "icc_a1", "dice", ...
  double value = 0.0;
  double lower = 0.0;  // interval of the value where the statistic has one; NaN otherwise
  double upper = 0.0;
  int n = 0;           // rows (subjects, images or pairs) behind the value
  std::string note;
};

// One test subject's prediction of one quantity next to its exact truth.
struct SubjectPrediction {
  std::string test_set;
  int subject = 0;
  int rescan = 0;
  std::string quantity;
  double predicted = 0.0;
  double truth = 0.0;
};

struct EpochRow {
  int epoch = 0;  // 1-based
  double training_loss = 0.0;
  double validation_loss = 0.0;   // NaN without a validation split
  double validation_error = 0.0;  // the selection criterion (learner.h); NaN without one
};

// One label a cell bought: which part of the plan it belongs to ("strong" or "weak" for mixed
// plans, "" otherwise), whose label it is, and its annotator time.
struct LabelCostRow {
  std::string part;
  int subject = 0;
  int rater = 0;
  std::string kind;  // "count", "outline", ...
  double seconds = 0.0;
};

// One picture a cell keeps for its report: a 2D slice (the reference slice of a 3D subject) of
// the first held-out test subject with a lesion (image, truth, prediction map) or of the first
// label the cell bought (its image and the label).
struct ExampleMap {
  std::string role;     // "test_image", "test_truth", "prediction", "label_image", "label"
  int subject = 0;      // subject index of the test or pool phantom set
  std::string caption;  // what the picture shows, for the panel ("count label: 7")
  std::string scale;    // "grey" (stretched to its own range) or "probability" (0..1)
  int width = 0;
  int height = 0;
  std::vector<float> pixels;  // row-major, width x height
};

struct CellRecord {
  std::string key;          // stable hash of the resolved cell (hex)
  std::string plan;         // label plan name from the study file
  std::string strategy;     // strategy name ("count-map", "mask", ...)
  double budget = 0.0;      // in budget_unit
  std::string budget_unit;  // "hours" or "labels"
  int repeat = 0;
  std::string spec_json;    // the resolved cell, canonical JSON
  std::string status;       // "done" or "failed"
  std::string error;        // the failure's message; empty when done
  int labels_bought = 0;
  double hours_spent = 0.0;  // annotator-hours of the labels bought
  double seconds_generate = 0.0;
  double seconds_label = 0.0;
  double seconds_train = 0.0;
  double seconds_predict = 0.0;
  double seconds_score = 0.0;
  std::vector<MetricRow> metrics;
  std::vector<SubjectPrediction> predictions;
  std::vector<EpochRow> training_curve;
  std::vector<LabelCostRow> label_costs;
  std::vector<ExampleMap> example_maps;
};

struct StudyRecord {
  std::string name;
  std::string study_hash;     // hash of the resolved study; a store belongs to exactly one
  std::string resolved_yaml;  // the resolved study file
  std::string tool_version;   // frugal version that created the store
  int cells_total = 0;        // cells the study expands into (all shards)
};

class ResultsStore {
 public:
  // Creates the file (WAL journal) or opens one that holds the same study. Throws UserError naming
  // the file when it is not a frugal results store, has another schema version, or holds another
  // study (different study_hash).
  static ResultsStore open_for_study(const std::string& path, const StudyRecord& study);
  // Opens an existing store read-only (export, merge, plan). Throws UserError as above.
  static ResultsStore open_existing(const std::string& path);

  ResultsStore(ResultsStore&&) noexcept;
  ResultsStore& operator=(ResultsStore&&) noexcept;
  ~ResultsStore();

  const std::string& path() const;
  StudyRecord study() const;
  // Keys of cells whose status is "done" (failed cells are run again on resume).
  std::set<std::string> finished_keys() const;
  // Writes the cell and all its rows in one transaction, replacing an earlier failed record of
  // the same key. A key already stored as "done" is an internal error (FRUGAL_CHECK).
  void write_cell(const CellRecord& cell);
  // Every cell with its rows, ordered by key.
  std::vector<CellRecord> cells() const;

  struct Impl;

 private:
  explicit ResultsStore(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

// Merges shards of one study into `output` (which must not exist). Throws UserError when the
// inputs hold different studies, or one key is stored twice with different contents (timing
// columns excepted). A key done in one input and failed in another keeps the done record.
void merge_stores(const std::vector<std::string>& inputs, const std::string& output);

// Tidy exports, one row per observation: cells.csv, metrics.csv, predictions.csv,
// training_curves.csv, label_costs.csv in `folder` (created; files written whole), and one JSON
// document with the study and the same tables. The example pictures stay in the store (float32
// BLOBs, results_store_v1.md says how to read them).
void export_csv(const ResultsStore& store, const std::string& folder);
void export_json(const ResultsStore& store, const std::string& file);

}  // namespace frugal::store
