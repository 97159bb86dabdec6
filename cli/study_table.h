#pragma once
// The plain-text answer of a study: per plan, strategy and budget, what was spent and what was
// recovered (mean over repeats with its interval), then the paired differences between plans.

#include <string>
#include <vector>

#include "experiments/store/results_store.h"

namespace frugal::cli {

// `lower_is_better` decides the wording of a supported difference ("lower count MAE").
std::string format_study_table(const std::vector<store::CellRecord>& cells, const std::string& quantity,
                               const std::string& metric, bool lower_is_better);

}  // namespace frugal::cli
