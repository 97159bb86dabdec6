#include "experiments/study/study_summary.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <tuple>

#include "experiments/measure/mean_interval.h"

namespace frugal::study {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double metric_value(const store::CellRecord& cell, const std::string& test_set, const std::string& quantity,
                    const std::string& metric) {
  for (const store::MetricRow& row : cell.metrics)
    if (row.test_set == test_set && row.quantity == quantity && row.metric == metric) return row.value;
  return kNaN;
}

}  // namespace

StudySummary summarise(const std::vector<store::CellRecord>& cells, const std::string& test_set,
                       const std::string& quantity, const std::string& metric, double confidence) {
  StudySummary summary;
  summary.test_set = test_set;
  summary.quantity = quantity;
  summary.metric = metric;
  summary.confidence = confidence;
  // Arms in the order they first appear when cells are sorted by (plan, strategy, budget, repeat).
  std::vector<const store::CellRecord*> sorted;
  for (const store::CellRecord& cell : cells) sorted.push_back(&cell);
  std::stable_sort(sorted.begin(), sorted.end(), [](const store::CellRecord* a, const store::CellRecord* b) {
    return std::tie(a->plan, a->strategy, a->budget, a->repeat) < std::tie(b->plan, b->strategy, b->budget, b->repeat);
  });
  std::map<std::tuple<std::string, std::string, double>, std::size_t> position;
  for (const store::CellRecord* cell : sorted) {
    const auto key = std::make_tuple(cell->plan, cell->strategy, cell->budget);
    auto found = position.find(key);
    if (found == position.end()) {
      found = position.emplace(key, summary.rows.size()).first;
      ArmBudget row;
      row.plan = cell->plan;
      row.strategy = cell->strategy;
      row.budget = cell->budget;
      row.budget_unit = cell->budget_unit;
      summary.rows.push_back(row);
    }
    ArmBudget& row = summary.rows[found->second];
    if (cell->status != "done") {
      ++row.failed;
      continue;
    }
    const double value = metric_value(*cell, test_set, quantity, metric);
    if (std::isnan(value)) continue;
    row.values.push_back(value);
    row.repeat_ids.push_back(cell->repeat);
    row.mean_hours += cell->hours_spent;
    row.mean_labels += cell->labels_bought;
  }
  for (ArmBudget& row : summary.rows) {
    row.repeats = static_cast<int>(row.values.size());
    if (row.repeats > 0) {
      row.mean_hours /= row.repeats;
      row.mean_labels /= row.repeats;
    }
    measure::mean_interval(row.values, confidence, row.mean, row.lower, row.upper);
  }
  // Paired differences between arms at the same budget, over the repeats both finished.
  for (std::size_t a = 0; a < summary.rows.size(); ++a)
    for (std::size_t b = a + 1; b < summary.rows.size(); ++b) {
      const ArmBudget& first = summary.rows[a];
      const ArmBudget& second = summary.rows[b];
      if (first.budget != second.budget || first.budget <= 0.0) continue;
      std::vector<double> differences;
      for (std::size_t i = 0; i < first.repeat_ids.size(); ++i)
        for (std::size_t j = 0; j < second.repeat_ids.size(); ++j)
          if (first.repeat_ids[i] == second.repeat_ids[j]) differences.push_back(first.values[i] - second.values[j]);
      PairedDifference difference;
      difference.budget = first.budget;
      difference.first = first.plan + " / " + first.strategy;
      difference.second = second.plan + " / " + second.strategy;
      difference.pairs = static_cast<int>(differences.size());
      measure::mean_interval(differences, confidence, difference.mean, difference.lower, difference.upper);
      difference.supported = std::isfinite(difference.lower) && (difference.lower > 0.0 || difference.upper < 0.0);
      summary.differences.push_back(difference);
    }
  return summary;
}

}  // namespace frugal::study
