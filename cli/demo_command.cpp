// frugal demo: the main job on the bundled demo study (studies/ageing-cohort.yaml, a fictional
// ageing-cohort team with up to 32 annotator-hours): every plan, strategy, budget and repeat run
// into DIR/results.db (resumed when it is there), then the measured table per plan and budget, the
// hours each plan needs for the target (frugal plan), and the HTML report in DIR/report.

#include <sys/wait.h>
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "cli/study_run.h"
#include "cli/plan_table.h"
#include "cli/study_table.h"
#include "experiments/plan/plan_answer.h"
#include "experiments/report/study_report.h"
#include "experiments/store/results_store.h"
#include "experiments/study/study_yaml.h"
#include "phantoms/user_error.h"

namespace frugal::cli {
namespace {

namespace fs = std::filesystem;

struct DemoArguments {
  std::string study = std::string(FRUGAL_SOURCE_DIR) + "/studies/ageing-cohort.yaml";
  std::string out = "demo";
  int threads = 0;
  // The demo team's question: which plan gets the count within 1.5 lesions on average.
  std::vector<std::string> targets = {"count.mae<=1.5"};
};

void demo(const DemoArguments& arguments) {
  std::error_code ignored;
  if (!fs::is_regular_file(arguments.study, ignored))
    throw UserError(arguments.study + ": the demo study is missing; allowed: --study FILE naming a study file "
                    "(the bundled one is studies/ageing-cohort.yaml in the source tree)");
  study::StudyOptions options = study::read_study_file(arguments.study);
  if (arguments.threads != 0) {
    if (arguments.threads < 1 || arguments.threads > 256)
      throw UserError("--threads " + std::to_string(arguments.threads) + ": allowed 1 to 256");
    options.threads = arguments.threads;
  }
  fs::create_directories(arguments.out, ignored);
  if (!fs::is_directory(arguments.out, ignored)) throw UserError(arguments.out + ": cannot create the output folder");
  const std::string store_path = (fs::path(arguments.out) / "results.db").string();
  std::printf("Demo study %s (%s): fictional data, invented numbers.\n", options.name.c_str(), arguments.study.c_str());
  const study::RunSummary summary = run_study_with_display(options, store_path, study::Shard{});

  const store::ResultsStore results = store::ResultsStore::open_existing(store_path);
  const std::string quantity = options.quantities.front();
  std::printf("\nWhich labelling plan recovers the %s for the annotator-hours it costs? (held-out test set of %d "
              "subjects per repeat; mean over %d repeats, 95%% t-interval)\n\n",
              quantity.c_str(), options.cohort.test, options.repeats);
  std::fputs(format_study_table(results.cells(), quantity, "mae", true).c_str(), stdout);
  std::vector<plan::Target> targets;
  for (const std::string& text : arguments.targets) targets.push_back(plan::parse_target(text, "--target"));
  const std::vector<store::CellRecord> cells = results.cells();
  const plan::PlanOptions plan_options;
  const plan::PlanAnswer answer = plan::answer_plan(cells, targets, plan_options);
  std::vector<plan::ShortcutRow> shortcut;
  for (const plan::Target& target : targets)
    for (const plan::ShortcutRow& row : plan::shortcut_summary(cells, target, plan_options.confidence)) shortcut.push_back(row);
  const auto repeatability = plan::repeatability_summary(cells, targets.front().quantity, plan_options.confidence);
  std::printf("\nHow many annotator-hours does each plan need? (frugal plan %s --target %s)\n\n", store_path.c_str(),
              arguments.targets.front().c_str());
  std::fputs(format_plan_answer(answer, shortcut, repeatability, options.repeats).c_str(), stdout);
  const report::StudyReportFiles report_files =
      report::write_study_report(store_path, targets, plan_options, (fs::path(arguments.out) / "report").string());
  std::printf("\nReport: %s (figures as SVG, PNG, PDF and CSV in %s/report/figures)\n", report_files.html.c_str(),
              arguments.out.c_str());
  std::printf("Every cell's numbers: %s (frugal export %s --csv DIR for pandas or R).\n", store_path.c_str(),
              store_path.c_str());
  if (summary.failed > 0)
    throw UserError(std::to_string(summary.failed) + " demo cells failed (see above; recorded in " + store_path + ")");
}

}  // namespace

void add_demo_command(CLI::App& app) {
  auto arguments = std::make_shared<DemoArguments>();
  CLI::App* command = app.add_subcommand(
      "demo", "Run the bundled demo study (a fictional ageing-cohort team: counts or outlines for up to 32 "
              "annotator-hours?) into DIR/results.db and print the answer (README.md).");
  command->add_option("--out", arguments->out, "Folder for results.db (resumed when present)")->capture_default_str();
  command->add_option("--study", arguments->study, "Another study file to run the same way")->capture_default_str();
  command->add_option("--threads", arguments->threads, "Torch threads per cell (default: the study's threads)");
  command->add_option("--target", arguments->targets, "The question's targets, as for frugal plan")->capture_default_str();
  command->callback([arguments] { demo(*arguments); });
}

}  // namespace frugal::cli
