#pragma once
// The report of a study: its question and settings, the recommendation in one sentence, the
// learning-curve, cost–error, agreement and scatter figures (with the CSV of every plotted
// number), the tables behind them, the rater and cost assumptions, what was extrapolated, and
// the cautions — one self-contained HTML file and its figure files in one folder.

#include <string>
#include <vector>

#include "experiments/plan/plan_answer.h"
#include "experiments/plan/target.h"

namespace frugal::report {

struct StudyReportFiles {
  std::string html;                  // DIR/report.html
  std::string json;                  // DIR/plan.json, the answer as `frugal plan --json` writes it
  std::vector<std::string> figures;  // every figure file written (svg, png, pdf, csv)
};

// Reads the store, answers the targets and writes DIR (created when absent).
StudyReportFiles write_study_report(const std::string& store_path, const std::vector<plan::Target>& targets,
                                    const plan::PlanOptions& options, const std::string& folder);

}  // namespace frugal::report
