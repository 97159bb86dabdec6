#pragma once
// What a study's stored cells say, per plan, strategy and budget: one metric's mean over repeats
// with a Student-t interval, and the paired difference between every two arms at each budget
// (paired by repeat: the same test subjects and purchase order), with its interval. A difference
// is "supported" only when its interval excludes zero.

#include <string>
#include <vector>

#include "experiments/store/results_store.h"

namespace frugal::study {

struct ArmBudget {
  std::string plan;
  std::string strategy;
  double budget = 0.0;
  std::string budget_unit;
  int repeats = 0;  // finished repeats with a value
  int failed = 0;   // failed cells of this arm and budget
  double mean_hours = 0.0;
  double mean_labels = 0.0;
  double mean = 0.0;  // the metric over repeats
  double lower = 0.0;
  double upper = 0.0;  // NaN with fewer than 2 repeats
  std::vector<double> values;  // per repeat, in repeat order
  std::vector<int> repeat_ids;
};

struct PairedDifference {
  double budget = 0.0;
  std::string first;   // "plan / strategy"
  std::string second;
  int pairs = 0;
  double mean = 0.0;  // first - second
  double lower = 0.0;
  double upper = 0.0;
  bool supported = false;  // the interval excludes 0
};

struct StudySummary {
  std::string test_set;
  std::string quantity;
  std::string metric;
  double confidence = 0.95;
  std::vector<ArmBudget> rows;  // in the cells' plan, strategy, budget order
  std::vector<PairedDifference> differences;
};

StudySummary summarise(const std::vector<store::CellRecord>& cells, const std::string& test_set,
                       const std::string& quantity, const std::string& metric, double confidence = 0.95);

}  // namespace frugal::study
