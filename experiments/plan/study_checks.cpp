#include "experiments/plan/study_checks.h"

#include <cmath>
#include <limits>
#include <map>

#include "experiments/measure/mean_interval.h"

namespace frugal::plan {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double value_of(const store::CellRecord& cell, const std::string& test_set, const std::string& quantity,
                const std::string& metric) {
  for (const store::MetricRow& row : cell.metrics)
    if (row.test_set == test_set && row.quantity == quantity && row.metric == metric) return row.value;
  return kNaN;
}

// The done cells of every arm at its largest budget, in (plan, strategy) order.
std::map<std::pair<std::string, std::string>, std::vector<const store::CellRecord*>> largest_budget_cells(
    const std::vector<store::CellRecord>& cells) {
  std::map<std::pair<std::string, std::string>, double> largest;
  for (const store::CellRecord& cell : cells) {
    if (cell.status != "done") continue;
    auto [it, inserted] = largest.emplace(std::make_pair(cell.plan, cell.strategy), cell.budget);
    if (!inserted) it->second = std::max(it->second, cell.budget);
  }
  std::map<std::pair<std::string, std::string>, std::vector<const store::CellRecord*>> out;
  for (const store::CellRecord& cell : cells)
    if (cell.status == "done" && cell.budget == largest.at({cell.plan, cell.strategy}))
      out[{cell.plan, cell.strategy}].push_back(&cell);
  return out;
}

}  // namespace

std::vector<ShortcutRow> shortcut_summary(const std::vector<store::CellRecord>& cells, const Target& target,
                                          double confidence) {
  std::vector<ShortcutRow> rows;
  for (const auto& [arm, at_budget] : largest_budget_cells(cells)) {
    ShortcutRow row;
    row.plan = arm.first;
    row.strategy = arm.second;
    row.budget = at_budget.front()->budget;
    row.quantity = target.quantity;
    row.metric = target.at_least ? "1 - " + target.metric : target.metric;
    std::vector<double> correlated;
    std::vector<double> decorrelated;
    std::vector<double> differences;
    for (const store::CellRecord* cell : at_budget) {
      const double test = value_of(*cell, "test", target.quantity, target.metric);
      const double shifted = value_of(*cell, "decorrelated", target.quantity, target.metric);
      if (!std::isfinite(test) || !std::isfinite(shifted)) continue;
      correlated.push_back(target.error_of(test));
      decorrelated.push_back(target.error_of(shifted));
      differences.push_back(decorrelated.back() - correlated.back());
    }
    if (differences.empty()) continue;
    row.pairs = static_cast<int>(differences.size());
    double unused_low = kNaN;
    double unused_high = kNaN;
    measure::mean_interval(correlated, confidence, row.correlated, unused_low, unused_high);
    measure::mean_interval(decorrelated, confidence, row.decorrelated, unused_low, unused_high);
    measure::mean_interval(differences, confidence, row.difference, row.lower, row.upper);
    rows.push_back(row);
  }
  return rows;
}

std::vector<RepeatabilityRow> repeatability_summary(const std::vector<store::CellRecord>& cells,
                                                    const std::string& quantity, double confidence) {
  std::vector<RepeatabilityRow> rows;
  for (const auto& [arm, at_budget] : largest_budget_cells(cells)) {
    std::vector<double> coefficients;
    for (const store::CellRecord* cell : at_budget) {
      const double value = value_of(*cell, "rescan", quantity, "repeatability_coefficient");
      if (std::isfinite(value)) coefficients.push_back(value);
    }
    if (coefficients.empty()) continue;
    RepeatabilityRow row;
    row.plan = arm.first;
    row.strategy = arm.second;
    row.budget = at_budget.front()->budget;
    row.quantity = quantity;
    row.repeats = static_cast<int>(coefficients.size());
    measure::mean_interval(coefficients, confidence, row.coefficient, row.lower, row.upper);
    rows.push_back(row);
  }
  return rows;
}

}  // namespace frugal::plan
