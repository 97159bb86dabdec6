#include "experiments/study/cell.h"

#include <openssl/evp.h>
#include <yaml-cpp/yaml.h>

#include <array>

#include "corruptors/rater_yaml.h"
#include "experiments/learn/train_options_json.h"
#include "phantoms/image.h"
#include "phantoms/key_path.h"
#include "phantoms/user_error.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/yaml_to_json.h"

namespace frugal::study {

using nlohmann::json;

namespace {

// The scenario and rater writers give every option as YAML; their JSON form is that YAML's tree.
json scenario_json(const ScenarioOptions& scenario) { return yaml_to_json(YAML::Load(scenario_to_yaml(scenario))); }
json rater_json(const RaterOptions& rater) { return yaml_to_json(YAML::Load(rater_to_yaml(rater))); }

// JSON is YAML: the scenario and rater readers take their JSON form back, with their own checks.
ScenarioOptions scenario_from_json(const json& tree) { return read_scenario(YAML::Load(tree.dump()), "spec_json.scenario"); }
RaterOptions rater_from_json(const json& tree, const std::string& where) {
  return read_rater(YAML::Load(tree.dump()), where);
}

LabelPlan plan_from_json(const json& tree, const std::string& where) {
  LabelPlan plan;
  plan.name = tree.at("name").get<std::string>();
  if (tree.contains("strong")) {
    plan.strong = tree.at("strong").get<std::string>();
    plan.weak = tree.at("weak").get<std::string>();
    plan.strong_share = tree.at("strong_share").get<double>();
  } else if (tree.at("kind").get<std::string>() == "none") {
    plan.labelled = false;
  } else {
    plan.kind = label_kind_from_string(tree.at("kind").get<std::string>());
    if (plan.kind == LabelKind::count) plan.scope = count_scope_from_string(tree.at("scope").get<std::string>());
    plan.rater = rater_from_json(tree.at("rater"), where + ".rater");
    plan.raters_per_image = tree.at("raters_per_image").get<int>();
  }
  return plan;
}

json strategies_json(const std::vector<learn::Strategy>& strategies) {
  json names = json::array();
  for (learn::Strategy strategy : strategies) names.push_back(learn::to_string(strategy));
  return names;
}

}  // namespace

std::string to_string(BudgetUnit unit) { return unit == BudgetUnit::hours ? "hours" : "labels"; }

json to_json(const LabelPlan& plan) {
  json out = {{"name", plan.name}};
  if (plan.is_mixed()) {
    out["strong"] = plan.strong;
    out["weak"] = plan.weak;
    out["strong_share"] = plan.strong_share;
  } else if (!plan.labelled) {
    out["kind"] = "none";
  } else {
    out["kind"] = to_string(plan.kind);
    if (plan.kind == LabelKind::count) out["scope"] = to_string(plan.scope);
    out["rater"] = rater_json(plan.rater);
    out["raters_per_image"] = plan.raters_per_image;
  }
  out["strategies"] = strategies_json(plan.strategies);
  return out;
}

json to_json(const CellSpec& cell, bool with_threads) {
  json out = {{"study", cell.study},
              {"scenario", scenario_json(cell.scenario)},
              {"seed", cell.seed},
              {"cohort",
               {{"pool", cell.cohort.pool},
                {"test", cell.cohort.test},
                {"test_rescans", cell.cohort.test_rescans},
                {"decorrelated_test", cell.cohort.decorrelated_test}}},
              {"plan", to_json(cell.plan)},
              {"train", learn::to_json(cell.train)},
              {"training_images", cell.training_images},
              {"budget", cell.budget},
              {"budget_unit", to_string(cell.budget_unit)},
              {"repeat", cell.repeat},
              {"quantities", cell.quantities}};
  if (cell.plan.is_mixed()) {
    out["strong"] = to_json(cell.strong);
    out["weak"] = to_json(cell.weak);
  }
  // Strategies other than this cell's do not change it.
  out["plan"].erase("strategies");
  if (cell.plan.is_mixed()) {
    out["strong"].erase("strategies");
    out["weak"].erase("strategies");
  }
  if (with_threads) out["threads"] = cell.threads;
  return out;
}

CellSpec cell_from_json(const json& tree) {
  CellSpec cell;
  try {
    cell.study = tree.at("study").get<std::string>();
    cell.scenario = scenario_from_json(tree.at("scenario"));
    cell.seed = tree.at("seed").get<std::uint64_t>();
    const json& cohort = tree.at("cohort");
    cell.cohort.pool = cohort.at("pool").get<int>();
    cell.cohort.test = cohort.at("test").get<int>();
    cell.cohort.test_rescans = cohort.at("test_rescans").get<int>();
    cell.cohort.decorrelated_test = cohort.at("decorrelated_test").get<bool>();
    if (const std::string problem = key_path_under("cohort", cell.cohort.validate()); !problem.empty())
      throw UserError("spec_json." + problem);
    cell.plan = plan_from_json(tree.at("plan"), "spec_json.plan");
    if (cell.plan.is_mixed()) {
      cell.strong = plan_from_json(tree.at("strong"), "spec_json.strong");
      cell.weak = plan_from_json(tree.at("weak"), "spec_json.weak");
    }
    learn::update_from_json(tree.at("train"), cell.train, "spec_json.train");
    if (const std::string problem = key_path_under("train", cell.train.validate()); !problem.empty())
      throw UserError("spec_json." + problem);
    cell.plan.strategies = {cell.train.strategy};
    cell.training_images = tree.at("training_images").get<int>();
    cell.budget = tree.at("budget").get<double>();
    const std::string unit = tree.at("budget_unit").get<std::string>();
    if (unit != "hours" && unit != "labels")
      throw UserError("spec_json.budget_unit is '" + unit + "'; allowed: hours, labels");
    cell.budget_unit = unit == "hours" ? BudgetUnit::hours : BudgetUnit::labels;
    cell.repeat = tree.at("repeat").get<int>();
    cell.quantities = tree.at("quantities").get<std::vector<std::string>>();
    if (tree.contains("threads")) cell.threads = tree.at("threads").get<int>();
  } catch (const json::exception& error) {
    throw UserError(std::string("spec_json: not a cell as frugal writes it (") + error.what() + ")");
  }
  return cell;
}

json to_json(const StudyOptions& study) {
  json plans = json::array();
  for (const LabelPlan& plan : study.plans) plans.push_back(to_json(plan));
  learn::TrainOptions train = study.train;
  train.threads = 1;  // threads are not part of the study's identity
  return {{"name", study.name},
          {"scenario", scenario_json(study.scenario)},
          {"seed", study.seed},
          {"cohort",
           {{"pool", study.cohort.pool},
            {"test", study.cohort.test},
            {"test_rescans", study.cohort.test_rescans},
            {"decorrelated_test", study.cohort.decorrelated_test}}},
          {"plans", plans},
          {"budgets", study.budgets},
          {"budget_unit", to_string(study.budget_unit)},
          {"repeats", study.repeats},
          {"train", learn::to_json(train)},
          {"training_images", study.training_images},
          {"quantities", study.quantities}};
}

std::string sha256_hex(const std::string& text) {
  std::array<unsigned char, EVP_MAX_MD_SIZE> digest{};
  unsigned int length = 0;
  FRUGAL_CHECK(EVP_Digest(text.data(), text.size(), digest.data(), &length, EVP_sha256(), nullptr) == 1);
  static const char* kHex = "0123456789abcdef";
  std::string out;
  for (unsigned int i = 0; i < length; ++i) {
    out.push_back(kHex[digest[i] >> 4U]);
    out.push_back(kHex[digest[i] & 15U]);
  }
  return out;
}

std::string cell_key(const CellSpec& cell) {
  json identity = to_json(cell, false);
  identity["train"]["threads"] = 1;
  return sha256_hex(identity.dump());
}

std::string study_hash(const StudyOptions& study) { return sha256_hex(to_json(study).dump()); }

std::vector<CellSpec> expand_cells(const StudyOptions& study) {
  std::vector<CellSpec> cells;
  for (int repeat = 0; repeat < study.repeats; ++repeat)
    for (const LabelPlan& plan : study.plans)
      for (learn::Strategy strategy : plan.strategies) {
        CellSpec cell;
        cell.study = study.name;
        cell.scenario = study.scenario;
        cell.seed = study.seed;
        cell.cohort = study.cohort;
        cell.plan = plan;
        if (plan.is_mixed()) {
          cell.strong = *study.plan(plan.strong);
          cell.weak = *study.plan(plan.weak);
        }
        cell.train = study.train;
        cell.train.strategy = strategy;
        cell.train.seed = study.train.seed + static_cast<std::uint64_t>(repeat);  // a new training draw per repeat
        cell.train.threads = study.threads;
        cell.training_images = study.training_images;
        cell.budget_unit = study.budget_unit;
        cell.repeat = repeat;
        cell.quantities = study.quantities;
        cell.threads = study.threads;
        if (learn::is_classical(strategy) || !plan.labelled) {
          cell.budget = 0.0;
          cells.push_back(cell);
          continue;
        }
        for (double budget : study.budgets) {
          cell.budget = budget;
          cells.push_back(cell);
        }
      }
  return cells;
}

}  // namespace frugal::study
