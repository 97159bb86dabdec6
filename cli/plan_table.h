#pragma once
// The plain-text answer of `frugal plan` (and the end of `frugal demo`): per plan and strategy the
// hours needed with their interval and where they lie, the recommendation in one sentence, mixed
// splits, the shortcut and repeatability checks, and the cautions.

#include <string>
#include <vector>

#include "experiments/plan/plan_answer.h"
#include "experiments/plan/study_checks.h"

namespace frugal::cli {

std::string format_plan_answer(const plan::PlanAnswer& answer, const std::vector<plan::ShortcutRow>& shortcut,
                               const std::vector<plan::RepeatabilityRow>& repeatability, int repeats);

}  // namespace frugal::cli
