// frugal demo: the main job on the bundled demo study (studies/ageing-cohort.yaml, a fictional
// ageing-cohort team with 40 annotator-hours): every plan, strategy, budget and repeat run into
// DIR/results.db (resumed when it is there), then the answer per plan and budget with intervals
// over repeats and the paired differences between plans.

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
#include "cli/study_table.h"
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
  std::printf("\nEvery cell's numbers: %s (frugal export %s --csv DIR for pandas or R).\n", store_path.c_str(),
              store_path.c_str());
  std::printf("Caution: synthetic phantoms and simulated raters. This guides a labelling plan and the choice of a "
              "method;\nit does not validate a method for clinical use, replace a pilot on real data, or replace "
              "ethics approval,\nlocal regulations and qualified clinical judgement.\n");
  if (summary.failed > 0)
    throw UserError(std::to_string(summary.failed) + " demo cells failed (see above; recorded in " + store_path + ")");
}

}  // namespace

void add_demo_command(CLI::App& app) {
  auto arguments = std::make_shared<DemoArguments>();
  CLI::App* command = app.add_subcommand(
      "demo", "Run the bundled demo study (a fictional ageing-cohort team: counts, outlines or clicks for 40 "
              "annotator-hours?) into DIR/results.db and print the answer (README.md).");
  command->add_option("--out", arguments->out, "Folder for results.db (resumed when present)")->capture_default_str();
  command->add_option("--study", arguments->study, "Another study file to run the same way")->capture_default_str();
  command->add_option("--threads", arguments->threads, "Torch threads per cell (default: the study's threads)");
  command->callback([arguments] { demo(*arguments); });
}

}  // namespace frugal::cli
