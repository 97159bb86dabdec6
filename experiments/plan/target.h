#pragma once
// An accuracy target a labelling plan must reach, written "QUANTITY.METRIC<=VALUE" for errors
// (count.mae<=0.8) and "QUANTITY.METRIC>=VALUE" for agreements (affected_fraction.icc_a1>=0.9),
// optionally on another test set: "decorrelated:count.mae<=1". Learning curves are fitted to an
// error that falls with hours: the metric itself for errors, the shortfall 1 − metric for
// agreements.

#include <string>
#include <vector>

namespace frugal::plan {

struct Target {
  std::string text;  // as the user wrote it
  std::string test_set = "test";
  std::string quantity;
  std::string metric;
  bool at_least = false;  // ">=": an agreement metric; "<=": an error metric
  double value = 0.0;
  // The metric and the target as an error that falls with hours (1 − x for agreements).
  double error_of(double metric_value) const { return at_least ? 1.0 - metric_value : metric_value; }
  double error_target() const { return error_of(value); }
  bool met_by(double metric_value) const { return at_least ? metric_value >= value : metric_value <= value; }
};

// Throws UserError naming `where` (e.g. "--target") and what is allowed.
Target parse_target(const std::string& text, const std::string& where);

// Metrics a target may name: errors (mae, rmse) take "<=", agreements (icc_a1, pearson, spearman,
// weighted_kappa, dice_pooled, dice_mean, recall, precision, f1, auc) take ">=" and lie in [−1, 1].
bool is_error_metric(const std::string& metric);
bool is_agreement_metric(const std::string& metric);

}  // namespace frugal::plan
