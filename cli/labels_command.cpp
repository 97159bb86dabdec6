// frugal labels: what a rater panel would answer for a phantom set, and what it costs.

#include <CLI/CLI.hpp>

#include <opencv2/core/utility.hpp>

#include <cstdio>

#include "cli/commands.h"
#include "cli/progress_bar.h"
#include "cli/scenario_option.h"
#include "corruptors/label_set.h"
#include "corruptors/rater_yaml.h"
#include "phantoms/user_error.h"

namespace frugal::cli {

void add_labels_command(CLI::App& app) {
  struct Arguments {
    std::string scenario_file, rater_file, kind = "count", scope = "image";
    LabelSetOptions set;
    int dims = 0;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* command = app.add_subcommand(
      "labels",
      "Simulate the labels a rater panel gives for the subjects of a scenario (the same subjects `frugal phantoms` "
      "draws with the same seed): labels.csv with each label's annotator cost, clicks.csv for points, NIfTI masks for "
      "partial masks and outlines. Rater keys: docs/raters.md.");
  command->add_option("scenario", arguments->scenario_file, "Scenario YAML file")->required();
  command->add_option("--rater", arguments->rater_file, "Rater model YAML file (raters/*.yaml for examples)")->required();
  command->add_option("--kind", arguments->kind, "presence, count, grade, points, partial or outline")
      ->capture_default_str();
  command->add_option("--scope", arguments->scope, "Where counts are taken: image, reference-slice, left-half, right-half")
      ->capture_default_str();
  command->add_option("--count", arguments->set.count, "Number of subjects")->required();
  command->add_option("--out", arguments->set.out_dir, "Output folder (created if missing)")->required();
  command->add_option("--seed", arguments->set.seed, "Scenario seed (same as for frugal phantoms)")->capture_default_str();
  command->add_option("--first", arguments->set.first, "Index of the first subject")->capture_default_str();
  command->add_option("--threads", arguments->set.threads, "Worker threads; the files do not depend on it")
      ->capture_default_str();
  command->add_option("--dims", arguments->dims, "Override the scenario's geometry.dims (2 or 3)");
  command->add_flag("--overwrite", arguments->set.overwrite, "Allow a folder that already holds a finished label set");
  command->callback([arguments] {
    const ScenarioOptions scenario = read_scenario_with_dims(arguments->scenario_file, arguments->dims);
    const RaterOptions rater = read_rater_file(arguments->rater_file);
    arguments->set.kind = label_kind_from_string(arguments->kind);
    arguments->set.scope = count_scope_from_string(arguments->scope);
    if (arguments->set.scope == CountScope::reference_slice && scenario.geometry.dims != 3)
      throw UserError("--scope reference-slice needs a 3D scenario (geometry.dims 3 or --dims 3)");
    cv::setNumThreads(1);
    ProgressBar bar("labels", arguments->set.count);
    const LabelSetSummary summary = write_label_set(scenario, arguments->scenario_file, rater, arguments->rater_file,
                                                    arguments->set, [&bar](long long done) { bar.update(done); });
    bar.finish();
    std::printf("wrote %d %s labels to %s: %.2f annotator-hours (%.1f s per label) in %.2f s\n", summary.labels,
                arguments->kind.c_str(), arguments->set.out_dir.c_str(), summary.annotator_seconds / 3600.0,
                summary.annotator_seconds / summary.labels, summary.seconds);
  });
}

}  // namespace frugal::cli
