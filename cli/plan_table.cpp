#include "cli/plan_table.h"

#include <cmath>
#include <cstdio>

#include "experiments/plan/cautions.h"
#include "phantoms/text_format.h"

namespace frugal::cli {
namespace {

std::string pad(const std::string& text, std::size_t width, bool right = false) {
  if (text.size() >= width) return text + " ";
  const std::string fill(width - text.size(), ' ');
  return right ? fill + text : text + fill;
}

std::string hours(double value) {
  if (std::isinf(value)) return "none";
  if (std::isnan(value)) return "n/a";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, value < 10.0 ? "%.1f" : "%.0f", value);
  return buffer;
}

std::string fixed(double value, int digits) {
  if (!std::isfinite(value)) return "n/a";
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.*f", digits, value);
  return buffer;
}

std::string where(const plan::ArmHours& arm) {
  switch (arm.reach) {
    case plan::Reach::extrapolated: return "extrapolated " + fixed(arm.extrapolation, 1) + "x the largest";
    case plan::Reach::unreachable:
    case plan::Reach::not_fitted: return to_string(arm.reach) + " (see below)";
    default: return to_string(arm.reach);
  }
}

}  // namespace

std::string format_plan_answer(const plan::PlanAnswer& answer, const std::vector<plan::ShortcutRow>& shortcut,
                               const std::vector<plan::RepeatabilityRow>& repeatability, int repeats) {
  const int percent = static_cast<int>(std::round(100.0 * answer.options.confidence));
  std::string targets;
  for (const plan::Target& t : answer.targets) targets += (targets.empty() ? "" : " and ") + t.text;
  std::string out = "Target: " + targets + " (held-out test subjects). Hours are annotator-hours; intervals are " +
                    std::to_string(percent) + "% bootstrap intervals over " + std::to_string(repeats) +
                    " repeats (" + std::to_string(answer.options.draws) + " draws, expanded percentile).\n\n";
  out += pad("plan / strategy", 36) + pad("hours needed", 13, true) + "  " + pad("[" + std::to_string(percent) + "% interval]", 16) +
         pad("where", 30) + pad("measured hours", 16) + "\n";
  for (const plan::ArmHours& arm : answer.arms) {
    const bool has_hours = arm.reach != plan::Reach::not_fitted && arm.reach != plan::Reach::unreachable;
    const std::string interval = has_hours ? "[" + hours(arm.lower) + ", " + (std::isinf(arm.upper) ? "no bound" : hours(arm.upper)) + "]" : "";
    const std::string range = arm.labelled ? hours(arm.min_hours) + " to " + hours(arm.max_hours) : "no labels";
    out += pad(arm.plan + " / " + arm.strategy, 36) + pad(has_hours ? hours(arm.hours) : "-", 13, true) + "  " +
           pad(interval, 16) + pad(where(arm), 30) + pad(range, 16) + "\n";
  }
  bool any_problem = false;
  for (const plan::ArmHours& arm : answer.arms)
    if (!arm.problem.empty() || !arm.note.empty()) {
      if (!any_problem) out += "\n";
      any_problem = true;
      out += "  " + arm.plan + " / " + arm.strategy + ": " + (arm.problem.empty() ? arm.note : arm.problem) + "\n";
    }
  out += "\n" + answer.sentence + "\n";
  for (const plan::MixedSplit& split : answer.mixed) {
    out += "\nMixed " + split.strong + " + " + split.weak + " with " + split.strategy + ": ";
    for (std::size_t i = 0; i < split.plans.size(); ++i)
      out += (i ? ", " : "") + format_number(100.0 * split.shares[i]) + "% strong needs " + hours(split.hours[i]) + " h";
    out += split.best_plan.empty() ? "; no share measured reaches the target.\n"
                                   : "; best measured split: " + format_number(100.0 * split.best_share) +
                                         "% of the budget on strong labels (" + split.best_plan + ").\n";
  }
  if (!shortcut.empty()) {
    out += "\nShortcut check (" + shortcut.front().quantity + " " + shortcut.front().metric +
           ", decorrelated minus correlated test set, at each arm's largest budget; > 0 means the method leans on "
           "the confounder):\n";
    for (const plan::ShortcutRow& row : shortcut)
      out += "  " + pad(row.plan + " / " + row.strategy, 36) + pad(fixed(row.correlated, 3), 8, true) + " -> " +
             pad(fixed(row.decorrelated, 3), 8) + " difference " + fixed(row.difference, 3) + " [" +
             fixed(row.lower, 3) + ", " + fixed(row.upper, 3) + "]\n";
  }
  if (!repeatability.empty()) {
    out += "\nRepeatability on rescans (" + repeatability.front().quantity +
           " repeatability coefficient at each arm's largest budget; the truth's is 0):\n";
    for (const plan::RepeatabilityRow& row : repeatability)
      out += "  " + pad(row.plan + " / " + row.strategy, 36) + fixed(row.coefficient, 3) + " [" + fixed(row.lower, 3) +
             ", " + fixed(row.upper, 3) + "]\n";
  }
  out += "\nCaution:";
  for (const std::string& caution : plan::cautions()) out += " " + caution;
  return out + "\n";
}

}  // namespace frugal::cli
