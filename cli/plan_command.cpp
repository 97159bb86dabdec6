// frugal plan: the hours each label plan needs to reach the targets, read off learning curves
// fitted to a study's results store, with bootstrap intervals over repeats.

#include <CLI/CLI.hpp>
#include <cstdio>
#include <memory>
#include <set>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "cli/plan_table.h"
#include "experiments/plan/plan_json.h"
#include "experiments/store/results_store.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::cli {
namespace {

struct PlanArguments {
  std::string store;
  std::vector<std::string> targets;
  std::string json;
  int draws = 2000;
  std::uint64_t seed = 1;
  double confidence = 0.95;
  bool unweighted = false;
};

void plan_store(const PlanArguments& arguments) {
  if (arguments.json.size()) require_writable_output(arguments.json, OutputKind::file, "a new or regular file for the JSON answer");
  std::vector<plan::Target> targets;
  for (const std::string& text : arguments.targets) targets.push_back(plan::parse_target(text, "--target"));
  const store::ResultsStore results = store::ResultsStore::open_existing(arguments.store);
  const std::vector<store::CellRecord> cells = results.cells();
  plan::PlanOptions options;
  options.draws = arguments.draws;
  options.seed = arguments.seed;
  options.confidence = arguments.confidence;
  options.weighted = !arguments.unweighted;
  const plan::PlanAnswer answer = plan::answer_plan(cells, targets, options);
  std::vector<plan::ShortcutRow> shortcut;
  std::vector<plan::RepeatabilityRow> repeatability;
  std::set<std::string> quantities;
  for (const plan::Target& target : targets) {
    for (const plan::ShortcutRow& row : plan::shortcut_summary(cells, target, options.confidence)) shortcut.push_back(row);
    if (quantities.insert(target.quantity).second)
      for (const plan::RepeatabilityRow& row : plan::repeatability_summary(cells, target.quantity, options.confidence))
        repeatability.push_back(row);
  }
  std::set<int> repeats;
  for (const store::CellRecord& cell : cells)
    if (cell.status == "done") repeats.insert(cell.repeat);
  if (arguments.json.empty()) {
    std::fputs(format_plan_answer(answer, shortcut, repeatability, static_cast<int>(repeats.size())).c_str(), stdout);
    return;
  }
  WholeFile file(arguments.json);
  file.write(plan::to_json(answer, shortcut, repeatability).dump(2) + "\n");
  file.commit();
  std::printf("%s\nwrote %s\n", answer.sentence.c_str(), arguments.json.c_str());
}

}  // namespace

void add_plan_command(CLI::App& app) {
  auto arguments = std::make_shared<PlanArguments>();
  CLI::App* command = app.add_subcommand(
      "plan", "The annotator-hours each label plan and strategy of a study needs to reach the targets, from "
              "inverse power-law learning curves with bootstrap intervals over repeats (docs/plan.md).");
  command->add_option("store", arguments->store, "Results store of a study (results.db)")->required();
  command->add_option("--target", arguments->targets,
                      "QUANTITY.METRIC<=VALUE for errors (mae, rmse) or >=VALUE for agreements (icc_a1, "
                      "weighted_kappa, dice_pooled, f1, ...); repeat it for targets that must all hold; prefix "
                      "decorrelated: for that test set")
      ->required();
  command->add_option("--json", arguments->json, "Write the answer as JSON to this file instead of a table");
  command->add_option("--draws", arguments->draws, "Bootstrap draws over repeats")->check(CLI::Range(100, 100000));
  command->add_option("--seed", arguments->seed, "Seed of the bootstrap");
  command->add_option("--confidence", arguments->confidence, "Level of every interval")->check(CLI::Range(0.5, 0.999));
  command->add_flag("--unweighted", arguments->unweighted,
                    "Fit without Figueroa et al. (2012)'s weights (points at more hours count more by default)");
  command->callback([arguments] { plan_store(*arguments); });
}

}  // namespace frugal::cli
