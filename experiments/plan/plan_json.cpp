#include "experiments/plan/plan_json.h"

#include <cmath>

namespace frugal::plan {
namespace {

using nlohmann::json;

json number(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }

json interval(double estimate, double lower, double upper) {
  return {{"estimate", number(estimate)}, {"lower", number(lower)}, {"upper", number(upper)},
          {"unbounded", std::isinf(upper)}};
}

json curve_json(const LearningCurve& curve) {
  json budgets = json::array();
  for (const BudgetMean& mean : curve.budgets)
    budgets.push_back({{"budget", mean.budget}, {"repeats", mean.repeats}, {"hours", number(mean.hours)},
                       {"error", number(mean.error)}, {"lower", number(mean.lower)}, {"upper", number(mean.upper)}});
  json out = {{"budgets", budgets}, {"problem", curve.problem}};
  if (curve.problem.empty())
    out["fit"] = {{"a", curve.fit.curve.a}, {"b", curve.fit.curve.b}, {"c", curve.fit.curve.c},
                  {"floor_held_at_zero", curve.fit.floor_held_at_zero}, {"weighted_ssr", curve.fit.weighted_ssr}};
  return out;
}

}  // namespace

json to_json(const PlanAnswer& answer, const std::vector<ShortcutRow>& shortcut,
             const std::vector<RepeatabilityRow>& repeatability) {
  json targets = json::array();
  for (const Target& t : answer.targets)
    targets.push_back({{"text", t.text}, {"test_set", t.test_set}, {"quantity", t.quantity}, {"metric", t.metric},
                       {"at_least", t.at_least}, {"value", t.value}});
  json arms = json::array();
  for (const ArmHours& arm : answer.arms) {
    json curves = json::array();
    for (const LearningCurve& curve : arm.curves) curves.push_back(curve_json(curve));
    arms.push_back({{"plan", arm.plan},
                    {"strategy", arm.strategy},
                    {"labelled", arm.labelled},
                    {"reach", to_string(arm.reach)},
                    {"problem", arm.problem},
                    {"note", arm.note},
                    {"hours", interval(arm.hours, arm.lower, arm.upper)},
                    {"measured_hours", {{"min", number(arm.min_hours)}, {"max", number(arm.max_hours)}}},
                    {"extrapolation", arm.reach == Reach::extrapolated ? number(arm.extrapolation) : json(nullptr)},
                    {"bootstrap_draws", arm.draws},
                    {"bootstrap_draws_unreachable", arm.draws_unreachable},
                    {"curves", curves}});
  }
  json out = {{"targets", targets},
              {"confidence", answer.options.confidence},
              {"bootstrap_draws", answer.options.draws},
              {"seed", answer.options.seed},
              {"weighted", answer.options.weighted},
              {"sentence", answer.sentence},
              {"arms", arms},
              {"cheapest", answer.cheapest >= 0 ? json(answer.arms[static_cast<std::size_t>(answer.cheapest)].plan + " / " +
                                                       answer.arms[static_cast<std::size_t>(answer.cheapest)].strategy)
                                                : json(nullptr)}};
  if (answer.has_difference) {
    const HoursDifference& d = answer.difference;
    out["difference"] = {{"cheaper", d.cheaper}, {"dearer", d.dearer}, {"hours", interval(d.mean, d.lower, d.upper)},
                         {"draws", d.draws}, {"supported", d.supported}};
  }
  json mixed = json::array();
  for (const MixedSplit& split : answer.mixed) {
    json shares = json::array();
    for (std::size_t i = 0; i < split.plans.size(); ++i)
      shares.push_back({{"plan", split.plans[i]}, {"strong_share", split.shares[i]}, {"hours", number(split.hours[i])}});
    mixed.push_back({{"strong", split.strong}, {"weak", split.weak}, {"strategy", split.strategy}, {"measured", shares},
                     {"best_plan", split.best_plan.empty() ? json(nullptr) : json(split.best_plan)},
                     {"best_strong_share", split.best_plan.empty() ? json(nullptr) : json(split.best_share)}});
  }
  out["mixed"] = mixed;
  json shortcuts = json::array();
  for (const ShortcutRow& row : shortcut)
    shortcuts.push_back({{"plan", row.plan}, {"strategy", row.strategy}, {"budget", row.budget},
                         {"quantity", row.quantity}, {"metric", row.metric}, {"pairs", row.pairs},
                         {"correlated", number(row.correlated)}, {"decorrelated", number(row.decorrelated)},
                         {"difference", interval(row.difference, row.lower, row.upper)}});
  out["shortcut"] = shortcuts;
  json rescans = json::array();
  for (const RepeatabilityRow& row : repeatability)
    rescans.push_back({{"plan", row.plan}, {"strategy", row.strategy}, {"budget", row.budget},
                       {"quantity", row.quantity}, {"repeats", row.repeats},
                       {"repeatability_coefficient", interval(row.coefficient, row.lower, row.upper)},
                       {"truth_repeatability_coefficient", 0.0}});
  out["repeatability"] = rescans;
  return out;
}

}  // namespace frugal::plan
