#pragma once
// The plan's answer as one JSON document (`frugal plan --json`). Non-finite numbers are null;
// an interval without an upper end has "upper": null and "unbounded": true.

#include <nlohmann/json.hpp>
#include <vector>

#include "experiments/plan/plan_answer.h"
#include "experiments/plan/study_checks.h"

namespace frugal::plan {

nlohmann::json to_json(const PlanAnswer& answer, const std::vector<ShortcutRow>& shortcut,
                       const std::vector<RepeatabilityRow>& repeatability);

}  // namespace frugal::plan
