// frugal phantoms: draw a phantom set from a scenario file.

#include <CLI/CLI.hpp>

#include <opencv2/core/utility.hpp>

#include <cstdio>

#include "cli/commands.h"
#include "cli/progress_bar.h"
#include "cli/scenario_option.h"
#include "phantoms/phantom_set.h"

namespace frugal::cli {

void add_phantoms_command(CLI::App& app) {
  struct Arguments {
    std::string scenario_file;
    PhantomSetOptions set;
    int dims = 0;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* command = app.add_subcommand(
      "phantoms",
      "Draw synthetic subjects with exact truth: one NIfTI image and one NIfTI label image per subject, "
      "truth.csv (one row per subject), objects.csv (one row per lesion or look-alike), a manifest and a preview "
      "montage. Scenario keys: docs/scenarios.md.");
  command->add_option("scenario", arguments->scenario_file, "Scenario YAML file")->required();
  command->add_option("--count", arguments->set.count, "Number of subjects")->required();
  command->add_option("--out", arguments->set.out_dir, "Output folder (created if missing)")->required();
  command->add_option("--seed", arguments->set.seed, "Scenario seed; same seed, same files")->capture_default_str();
  command->add_option("--threads", arguments->set.threads, "Worker threads; the files do not depend on it")
      ->capture_default_str();
  command->add_option("--dims", arguments->dims, "Override the scenario's geometry.dims (2 or 3)");
  command->add_option("--first", arguments->set.first, "Index of the first subject (to extend or shard a set)")
      ->capture_default_str();
  command->add_option("--rescans", arguments->set.rescans,
                      "Extra acquisitions per subject: same anatomy and lesions, new pose and noise")
      ->capture_default_str();
  command->add_option("--preview-tiles", arguments->set.preview_tiles, "Subjects shown in preview.png (0 = none)")
      ->capture_default_str();
  command->add_flag("--overwrite", arguments->set.overwrite, "Allow a folder that already holds a finished set");
  command->callback([arguments] {
    const ScenarioOptions scenario = read_scenario_with_dims(arguments->scenario_file, arguments->dims);
    cv::setNumThreads(1);  // frugal parallelises over subjects itself
    ProgressBar bar("phantoms", arguments->set.count);
    const PhantomSetSummary summary =
        write_phantom_set(scenario, arguments->scenario_file, arguments->set, [&bar](long long done) { bar.update(done); });
    bar.finish();
    std::printf("wrote %d subjects (%d files) to %s in %.2f s\n", summary.subjects, summary.files,
                arguments->set.out_dir.c_str(), summary.seconds);
  });
}

}  // namespace frugal::cli
