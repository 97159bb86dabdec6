#pragma once
// Two checks a study answers beside the hours, where it measured them, per label plan and
// strategy at the arm's largest budget:
// - the shortcut: the target's error on the test set with the confounder decorrelated minus the
//   error on the ordinary (correlated) test set, paired by repeat. A method that learned the
//   confounder instead of the quantity gets worse when the two come apart.
// - repeatability on rescans: the repeatability coefficient of the estimate (Bland & Altman
//   1986); the truth's own rescan difference is zero, so all of it is the method's.

#include <string>
#include <vector>

#include "experiments/plan/target.h"
#include "experiments/store/results_store.h"

namespace frugal::plan {

struct ShortcutRow {
  std::string plan;
  std::string strategy;
  double budget = 0.0;
  std::string quantity;
  std::string metric;  // as an error (1 − agreement for agreements)
  int pairs = 0;       // repeats with both test sets
  double correlated = 0.0;    // mean error on "test"
  double decorrelated = 0.0;  // mean error on "decorrelated"
  double difference = 0.0;    // decorrelated − correlated
  double lower = 0.0;         // Student-t interval of the paired difference; NaN with one pair
  double upper = 0.0;
};

struct RepeatabilityRow {
  std::string plan;
  std::string strategy;
  double budget = 0.0;
  std::string quantity;
  int repeats = 0;
  double coefficient = 0.0;  // mean over repeats, in the quantity's unit
  double lower = 0.0;
  double upper = 0.0;
};

// Empty when the study had no decorrelated test set / no rescans.
std::vector<ShortcutRow> shortcut_summary(const std::vector<store::CellRecord>& cells, const Target& target,
                                          double confidence);
std::vector<RepeatabilityRow> repeatability_summary(const std::vector<store::CellRecord>& cells,
                                                    const std::string& quantity, double confidence);

}  // namespace frugal::plan
