#pragma once
// One arm's learning curve for one target: the metric each repeat measured at each budget, turned
// into an error that falls with annotator-hours (target.h), and the inverse power law fitted to
// it (power_law.h). A curve the data cannot support carries the reason in `problem` and gives no
// hours: fewer than three budgets, an error that does not fall, or a curve that misses a budget's
// measured mean beyond its interval (Bonferroni, family-wise 1 %).

#include <string>
#include <vector>

#include "experiments/plan/power_law.h"
#include "experiments/plan/target.h"

namespace frugal::plan {

// One finished cell's value of the target's metric.
struct CurvePoint {
  int repeat = 0;
  double budget = 0.0;  // the cell's budget, in the study's unit
  double hours = 0.0;   // annotator-hours the cell actually spent (the curve's x)
  double value = 0.0;   // the metric as stored
  double error = 0.0;   // target.error_of(value): the curve's y
};

// The points at one budget, summarised over repeats.
struct BudgetMean {
  double budget = 0.0;
  int repeats = 0;
  double hours = 0.0;  // mean hours spent
  double error = 0.0;  // mean error
  double lower = 0.0;  // Student-t interval of the mean error; NaN with one repeat
  double upper = 0.0;
  double standard_error = 0.0;  // of the mean error; NaN with one repeat
};

struct LearningCurve {
  std::vector<CurvePoint> points;
  std::vector<BudgetMean> budgets;  // ascending
  PowerLawFit fit;
  std::string problem;  // why the curve gives no hours; empty when it does
  double min_hours = 0.0;  // measured range of hours spent
  double max_hours = 0.0;
};

// Fits the points (weighted as Figueroa et al. 2012 when `weighted`). Points must have finite
// values; cells whose metric is NaN are left out by the caller.
LearningCurve fit_learning_curve(std::vector<CurvePoint> points, double confidence, bool weighted);

// The same fit on a bootstrap resample: the points of `repeats` (a multiset of repeat ids), each
// repeat's points as often as it was drawn. Returns the fit, or converged = false when the
// resample cannot be fitted.
PowerLawFit refit(const std::vector<CurvePoint>& points, const std::vector<int>& repeats, bool weighted);

}  // namespace frugal::plan
