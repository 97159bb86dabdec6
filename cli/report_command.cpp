// frugal report: one self-contained HTML file answering a study's question — recommendation,
// figures, tables, assumptions, extrapolations and cautions — with every figure as SVG, PNG, PDF
// and the CSV of its numbers beside it.

#include <CLI/CLI.hpp>
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "experiments/plan/target.h"
#include "experiments/report/study_report.h"

namespace frugal::cli {
namespace {

struct ReportArguments {
  std::string store;
  std::string out = "report";
  std::vector<std::string> targets;
  int draws = 2000;
  std::uint64_t seed = 1;
  double confidence = 0.95;
};

void report(const ReportArguments& arguments) {
  std::vector<plan::Target> targets;
  for (const std::string& text : arguments.targets) targets.push_back(plan::parse_target(text, "--target"));
  plan::PlanOptions options;
  options.draws = arguments.draws;
  options.seed = arguments.seed;
  options.confidence = arguments.confidence;
  const report::StudyReportFiles files = report::write_study_report(arguments.store, targets, options, arguments.out);
  std::printf("wrote %s (%zu figure files in %s/figures, the answer as JSON in %s)\n", files.html.c_str(),
              files.figures.size(), arguments.out.c_str(), files.json.c_str());
}

}  // namespace

void add_report_command(CLI::App& app) {
  auto arguments = std::make_shared<ReportArguments>();
  CLI::App* command = app.add_subcommand(
      "report", "Write a self-contained HTML report of a study's answer, with figures (SVG, PNG, PDF and CSV) "
                "(docs/plan.md).");
  command->add_option("store", arguments->store, "Results store of a study (results.db)")->required();
  command->add_option("--out", arguments->out, "Folder for report.html, plan.json and figures/")->capture_default_str();
  command->add_option("--target", arguments->targets, "As for frugal plan; repeat for targets that must all hold")
      ->required();
  command->add_option("--draws", arguments->draws, "Bootstrap draws over repeats")->check(CLI::Range(100, 100000));
  command->add_option("--seed", arguments->seed, "Seed of the bootstrap");
  command->add_option("--confidence", arguments->confidence, "Level of every interval")->check(CLI::Range(0.5, 0.999));
  command->callback([arguments] { report(*arguments); });
}

}  // namespace frugal::cli
