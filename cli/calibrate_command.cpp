// frugal calibrate: rater-model noise that reproduces a measured inter-rater agreement.

#include <CLI/CLI.hpp>

#include <cstdio>
#include <iostream>

#include <nlohmann/json.hpp>

#include "cli/commands.h"
#include "corruptors/rater_yaml.h"
#include "experiments/calibration/calibration.h"
#include "frugal_version.h"
#include "phantoms/regular_file.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::cli {

void add_calibrate_command(CLI::App& app) {
  struct Arguments {
    std::string scenario_file, rater_file, statistic = "kappa", out;
    CalibrationOptions options;
    bool json = false;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* command = app.add_subcommand(
      "calibrate",
      "Find the rater noise that reproduces the agreement your team measured in a pilot: quadratic-weighted kappa "
      "between two raters' grades (tunes grading.perception_sd), ICC(2,1) between two raters' counts (tunes "
      "detection.size50_mm) or mean Dice between two raters' outlines (tunes outline.displacement_sd_mm). Writes a "
      "rater file ready for studies.");
  command->add_option("scenario", arguments->scenario_file, "Scenario YAML file (the subjects of the simulated pilot)")
      ->required();
  command->add_option("--rater", arguments->rater_file, "Starting rater model YAML file")->required();
  command->add_option("--statistic", arguments->statistic, "kappa, icc or dice")->capture_default_str();
  command->add_option("--target", arguments->options.target, "The agreement measured in the pilot")->required();
  command->add_option("--subjects", arguments->options.subjects, "Simulated pilot size")->capture_default_str();
  command->add_option("--seed", arguments->options.seed, "Seed of the simulated pilot")->capture_default_str();
  command->add_option("--out", arguments->out, "Write the calibrated rater model here (YAML)")->required();
  command->add_flag("--json", arguments->json, "Print the result as JSON");
  command->callback([arguments] {
    // Checked before the calibration runs, which can take minutes.
    require_writable_output(arguments->out, OutputKind::file, "a new or regular file for the rater YAML");
    const ScenarioOptions scenario = read_scenario_file(arguments->scenario_file);
    const RaterOptions rater = read_rater_file(arguments->rater_file);
    arguments->options.statistic = calibration_statistic_from_string(arguments->statistic);
    const CalibrationResult result = calibrate(scenario, rater, arguments->options);
    WholeFile out(arguments->out);
    out.write("# frugal " + std::string(kVersion) + ", calibrated rater: " + result.parameter + " tuned so that two raters reach " +
              arguments->statistic + " " + std::to_string(result.achieved) + " on " + arguments->scenario_file + "\n" +
              rater_to_yaml(result.rater));
    out.commit();
    if (arguments->json) {
      nlohmann::json report{{"tool", "frugal"},
                            {"version", kVersion},
                            {"schema_version", kOutputSchemaVersion},
                            {"statistic", arguments->statistic},
                            {"target", arguments->options.target},
                            {"parameter", result.parameter},
                            {"value", result.value},
                            {"achieved", result.achieved},
                            {"lower_95", result.lower},
                            {"upper_95", result.upper},
                            {"least_noise_agreement", result.least_noise_agreement},
                            {"most_noise_agreement", result.most_noise_agreement},
                            {"evaluations", result.evaluations},
                            {"subjects", arguments->options.subjects},
                            {"rater_file", arguments->out}};
      std::cout << report.dump(2) << "\n";
      return;
    }
    std::printf("%-28s %s\n", "statistic", arguments->statistic.c_str());
    std::printf("%-28s %.4f\n", "target", arguments->options.target);
    std::printf("%-28s %s = %.6g\n", "calibrated", result.parameter.c_str(), result.value);
    std::printf("%-28s %.4f (95%% CI %.4f .. %.4f, %d simulated subjects)\n", "achieved agreement", result.achieved,
                result.lower, result.upper, arguments->options.subjects);
    std::printf("%-28s %.4f .. %.4f\n", "reachable range", result.most_noise_agreement, result.least_noise_agreement);
    std::printf("%-28s %d\n", "evaluations", result.evaluations);
    std::printf("%-28s %s\n", "rater file", arguments->out.c_str());
  });
}

}  // namespace frugal::cli
