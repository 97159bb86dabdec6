#pragma once
// A study: one question ("which labels, how many annotator-hours?") as a grid of cells. A study
// names a scenario, the training pool labels are bought from and the held-out test sets, one or
// more label plans (kind + rater panel + cost, or a mix of a strong and a weak plan), the
// strategies trained on each plan, the budgets and the repeats. study_yaml.h reads it from a
// file (docs/studies.md); expand_cells() turns it into cells (cell.h).

#include <cstdint>
#include <string>
#include <vector>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "experiments/learn/learner.h"
#include "phantoms/scenario.h"

namespace frugal::study {

enum class BudgetUnit { hours, labels };
std::string to_string(BudgetUnit unit);

// Subjects of one repeat. Pool and test subjects never overlap; each repeat draws its own.
struct CohortOptions {
  int pool = 400;                  // training subjects labels can be bought for
  int test = 100;                  // held-out subjects, never trained on or used for model selection
  int test_rescans = 0;            // rescans per test subject (repeatability); 0 = none
  bool decorrelated_test = false;  // a second test set with the confounder's correlation set to 0
  std::string validate() const;    // empty, or "<key> = <value>: <what is allowed>"
};

// One kind of label from one rater panel. kind "none" (no labels) is for the classical
// strategies, which learn nothing: their cells have budget 0.
struct LabelPlan {
  std::string name;
  bool labelled = true;            // false for kind "none"
  LabelKind kind = LabelKind::count;
  CountScope scope = CountScope::image;
  RaterOptions rater;
  std::string rater_file;          // where the rater came from ("inline" when written in the study)
  int raters_per_image = 1;        // panel members who label each bought image, 1..panel.raters
  // Mixed plans: a strong plan (outlines) and a weak plan, by name, with the strong plan's share
  // of every budget. A mixed plan's own kind and rater are unused.
  std::string strong;
  std::string weak;
  double strong_share = 0.0;
  std::vector<learn::Strategy> strategies;  // trained on this plan, each in its own cells
  bool is_mixed() const { return !strong.empty(); }
};

struct StudyOptions {
  std::string name = "study";
  std::string file;  // the study file, for messages
  ScenarioOptions scenario;
  std::string scenario_file;  // "inline" when written in the study
  std::uint64_t seed = 1;
  CohortOptions cohort;
  std::vector<LabelPlan> plans;
  std::vector<double> budgets;  // in budget_unit, ascending
  BudgetUnit budget_unit = BudgetUnit::hours;
  int repeats = 3;
  learn::TrainOptions train;  // shared by every cell; the strategy is set per cell
  // Images through the optimiser per cell: epochs = round(this / labels bought), 1..train.epochs,
  // so that a small budget is not also a short training. 0 = always train.epochs.
  int training_images = 0;
  // Quantities scored on the test sets: count, affected_fraction, burden_mm3, grade, presence.
  std::vector<std::string> quantities;
  int threads = 2;  // torch threads per cell; not part of any cell's identity

  // The plan of that name, or nullptr.
  const LabelPlan* plan(const std::string& name) const;
};

// The quantities a family is usually scored on: streaks count, voids affected_fraction.
std::vector<std::string> default_quantities(Family family);
// Every quantity name a study may list.
const std::vector<std::string>& known_quantities();

}  // namespace frugal::study
