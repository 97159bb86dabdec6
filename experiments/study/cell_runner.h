#pragma once
// Runs one cell in memory: draw the repeat's pool and test subjects, buy labels in the repeat's
// fixed purchase order until the budget is spent, train the strategy, predict the held-out test
// sets and score them against the exact truth.
//
//   CellResult result = run_cell(spec);             // alone
//   CohortCache cache;  run_cell(spec, &cache);      // inside a study: subjects and labels shared
//
// The cache changes no number: every subject and label is a function of (scenario, seed, subject
// index, rater) alone. Torch's process-global state (threads, seed, denormals) is set by the
// learner for every cell, so a cell's numbers do not depend on what ran before it.

#include <functional>
#include <map>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "corruptors/label.h"
#include "experiments/store/results_store.h"
#include "experiments/study/cell.h"
#include "phantoms/subject.h"

namespace frugal::study {

// What a cell records: the store's row and its child rows.
using CellResult = store::CellRecord;

// Subject indices: each repeat owns a block of 1,000,000 indices, pool subjects first, then the
// test set and the decorrelated test set, so no two sets or repeats ever share a subject.
constexpr int kRepeatStride = 1000000;
constexpr int kTestOffset = 600000;
constexpr int kDecorrelatedOffset = 800000;
constexpr int kMaxPool = 500000;
constexpr int kMaxTest = 100000;
constexpr int kMaxRepeats = 1000;

// Where subjects come from: a scenario and seed, with the key the cache files them under
// (computed once: hashing the resolved scenario is far slower than drawing a small subject).
struct SubjectSource {
  SubjectSource(const ScenarioOptions& scenario, std::uint64_t seed);
  const ScenarioOptions& scenario;
  std::uint64_t seed;
  std::string key;
};

// A plan's labels for one source: what its raters answer does not depend on the plan's name.
struct LabelSource {
  LabelSource(const LabelPlan& plan, const SubjectSource& subjects);
  const LabelPlan& plan;
  const SubjectSource& subjects;
  std::string key;
};

// Subjects and bought labels shared by the cells of a study (one process). Not thread-safe.
class CohortCache {
 public:
  // A subject, generated on first use.
  const Subject& subject(const SubjectSource& source, int index, int rescan);
  // Generates the subjects missing from `indices` at once, on `threads` threads.
  void prefetch(const SubjectSource& source, const std::vector<int>& indices, int rescan, int threads);
  // The labels the plan's first raters_per_image raters give subject `index` (rescan 0).
  const std::vector<Label>& labels(const LabelSource& source, int index);
  // Makes the labels missing for `indices` at once, in parallel over subjects.
  void prefetch_labels(const LabelSource& source, const std::vector<int>& indices, int threads);
  // A finished cell whose purchase (everything but the budget, and the labels bought) was the
  // same: a budget beyond the pool buys what a smaller one did, and trains the same model.
  const CellResult* same_purchase(const std::string& purchase_key) const;
  void remember_purchase(const std::string& purchase_key, const CellResult& result);
  void clear();

 private:
  std::map<std::string, CellResult> results_;  // purchase key -> result
  std::map<std::string, std::map<std::pair<int, int>, Subject>> subjects_;  // source key -> (index, rescan)
  std::map<std::string, std::map<int, std::vector<Label>>> labels_;         // label source key -> index
};

// Where a cell is: "generate", "label", "train" (with epoch), "predict", "score".
struct CellProgress {
  std::string stage;
  int epoch = 0;
  int epochs = 0;
};

// The repeat's purchase order: a permutation of pool positions 0..pool-1, the same for every plan
// and budget, so a larger budget holds a smaller one's labels and plans are compared on the
// same images.
std::vector<int> purchase_order(std::uint64_t seed, int repeat, int pool);

// A cell's identity columns (key, factors, spec) with no results yet.
CellResult cell_record(const CellSpec& spec, const std::string& status);

// The epochs spec.training_images asks of a cell that trains on `labels` labels:
// round(training_images / labels). run_cell trains that many, clamped to 1 .. train.epochs; 0 when
// the cell trains train.epochs regardless (no training_images, a classical strategy, no labels).
int epochs_asked(const CellSpec& spec, int labels);

// Throws UserError for a failure the study can cause (training diverged, labels the strategy
// cannot use); the runner records it and goes on.
CellResult run_cell(const CellSpec& spec, CohortCache* cache = nullptr,
                    const std::function<void(const CellProgress&)>& progress = {});

}  // namespace frugal::study
