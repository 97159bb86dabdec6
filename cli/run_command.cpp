// frugal run: a study's cells into a results store, resumable and shardable (docs/studies.md).

#include <unistd.h>

#include <CLI/CLI.hpp>
#include <cmath>
#include <cstdio>
#include <memory>
#include <string>

#include "cli/commands.h"
#include "cli/study_run.h"
#include "experiments/study/study_yaml.h"
#include "phantoms/user_error.h"

namespace frugal::cli {
namespace {

struct RunArguments {
  std::string study;
  std::string out;
  int threads = 0;
  std::string shard = "1/1";
};

void run(const RunArguments& arguments) {
  study::StudyOptions options = study::read_study_file(arguments.study);
  if (arguments.threads != 0) {
    if (arguments.threads < 1 || arguments.threads > 256)
      throw UserError("--threads " + std::to_string(arguments.threads) + ": allowed 1 to 256");
    options.threads = arguments.threads;
  }
  const study::RunSummary summary = run_study_with_display(options, arguments.out, study::shard_from_string(arguments.shard));
  if (summary.failed > 0)
    throw UserError(std::to_string(summary.failed) + " of " + std::to_string(summary.cells_shard) +
                    " cells failed (recorded in " + arguments.out + "; run again to retry them)");
}

}  // namespace

void add_run_command(CLI::App& app) {
  auto arguments = std::make_shared<RunArguments>();
  CLI::App* command = app.add_subcommand(
      "run",
      "Run a study file's cells (plan x strategy x budget x repeat) into an SQLite results store; finished cells "
      "are skipped, so a killed run resumes where it stopped (docs/studies.md).");
  command->add_option("study", arguments->study, "Study file (YAML, docs/studies.md)")->required();
  command->add_option("--out", arguments->out, "Results store to create or resume (results.db)")->required();
  command->add_option("--threads", arguments->threads, "Torch threads per cell (default: the study's threads)");
  command
      ->add_option("--shard", arguments->shard,
                   "Run shard K of N (every N-th cell from the K-th); merge the shards' stores with frugal merge")
      ->capture_default_str();
  command->callback([arguments] { run(*arguments); });
}

}  // namespace frugal::cli
