#include "experiments/plan/learning_curve.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <set>

#include "experiments/measure/distributions.h"
#include "experiments/measure/mean_interval.h"
#include "phantoms/text_format.h"

namespace frugal::plan {
namespace {

constexpr double kLackOfFitLevel = 0.01;

// Three significant digits: messages quote measured values, not their last bits.
std::string number(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3g", value);
  return buffer;
}

double standard_error(const std::vector<double>& values) {
  const auto n = static_cast<double>(values.size());
  if (values.size() < 2) return std::numeric_limits<double>::quiet_NaN();
  double sum = 0.0;
  for (double v : values) sum += v;
  double squares = 0.0;
  for (double v : values) squares += (v - sum / n) * (v - sum / n);
  return std::sqrt(squares / (n - 1.0) / n);
}

PowerLawFit fit_points(const std::vector<const CurvePoint*>& points, bool weighted) {
  std::vector<double> x;
  std::vector<double> y;
  for (const CurvePoint* p : points) {
    x.push_back(p->hours);
    y.push_back(p->error);
  }
  std::set<double> distinct(x.begin(), x.end());
  if (x.size() < 3 || distinct.size() < 2) return {};
  return fit_power_law(x, y, weighted ? figueroa_weights(x) : std::vector<double>{});
}

}  // namespace

LearningCurve fit_learning_curve(std::vector<CurvePoint> points, double confidence, bool weighted) {
  LearningCurve curve;
  std::sort(points.begin(), points.end(), [](const CurvePoint& a, const CurvePoint& b) {
    return a.budget != b.budget ? a.budget < b.budget : a.repeat < b.repeat;
  });
  curve.points = std::move(points);
  std::map<double, std::vector<const CurvePoint*>> by_budget;
  for (const CurvePoint& p : curve.points) by_budget[p.budget].push_back(&p);
  for (const auto& [budget, at_budget] : by_budget) {
    BudgetMean mean;
    mean.budget = budget;
    mean.repeats = static_cast<int>(at_budget.size());
    std::vector<double> errors;
    double hours = 0.0;
    for (const CurvePoint* p : at_budget) {
      errors.push_back(p->error);
      hours += p->hours;
    }
    mean.hours = hours / mean.repeats;
    measure::mean_interval(errors, confidence, mean.error, mean.lower, mean.upper);
    mean.standard_error = standard_error(errors);
    curve.budgets.push_back(mean);
  }
  if (curve.points.empty()) {
    curve.problem = "no finished cell measured this metric";
    return curve;
  }
  curve.min_hours = curve.max_hours = curve.points.front().hours;
  for (const CurvePoint& p : curve.points) {
    curve.min_hours = std::min(curve.min_hours, p.hours);
    curve.max_hours = std::max(curve.max_hours, p.hours);
  }
  if (curve.budgets.size() < 3) {
    curve.problem = "only " + std::to_string(curve.budgets.size()) +
                    " budget(s) measured; a·h^(−b) + c has three parameters and needs at least 3";
    return curve;
  }
  if (curve.min_hours <= 0.0) {
    curve.problem = "a cell spent no annotator-hours; the curve is fitted against hours > 0";
    return curve;
  }
  const BudgetMean& first = curve.budgets.front();
  const BudgetMean& last = curve.budgets.back();
  if (!(last.error < first.error)) {
    curve.problem = "the error does not fall from the smallest budget (" + number(first.error) + " at " +
                    number(first.hours) + " h) to the largest (" + number(last.error) + " at " + number(last.hours) +
                    " h)";
    return curve;
  }
  std::vector<const CurvePoint*> all;
  for (const CurvePoint& p : curve.points) all.push_back(&p);
  curve.fit = fit_points(all, weighted);
  if (!curve.fit.converged) {
    curve.problem = "the power-law fit did not converge";
    return curve;
  }
  if (!(curve.fit.curve.a > 0.0) || !(curve.fit.curve.b > 0.0)) {
    curve.problem = "the fitted curve does not fall with hours (a = " + number(curve.fit.curve.a) +
                    ", b = " + number(curve.fit.curve.b) + ")";
    return curve;
  }
  // Lack of fit: the curve must pass through every budget's interval of the mean, at a
  // family-wise 1 % over the budgets (Bonferroni), so that a true curve is flagged 1 time in 100.
  const double family_confidence = 1.0 - kLackOfFitLevel / static_cast<double>(curve.budgets.size());
  for (const BudgetMean& mean : curve.budgets) {
    if (mean.repeats < 2) continue;
    const double fitted = curve.fit.curve(mean.hours);
    const double half = measure::student_t_quantile(0.5 + family_confidence / 2.0, mean.repeats - 1.0) * mean.standard_error;
    if (std::abs(fitted - mean.error) > half) {
      curve.problem = "poor fit: the curve gives " + number(fitted) + " at " + number(mean.hours) +
                      " h, outside the measured mean's interval " + number(mean.error - half) + " to " +
                      number(mean.error + half);
      return curve;
    }
  }
  return curve;
}

PowerLawFit refit(const std::vector<CurvePoint>& points, const std::vector<int>& repeats, bool weighted) {
  std::vector<const CurvePoint*> drawn;
  for (int repeat : repeats)
    for (const CurvePoint& p : points)
      if (p.repeat == repeat) drawn.push_back(&p);
  return fit_points(drawn, weighted);
}

}  // namespace frugal::plan
