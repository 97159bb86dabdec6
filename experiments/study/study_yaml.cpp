#include "experiments/study/study_yaml.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <set>

#include "corruptors/rater_yaml.h"
#include "experiments/learn/train_options_json.h"
#include "experiments/study/cell_runner.h"
#include "phantoms/key_path.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"
#include "phantoms/yaml_fields.h"
#include "phantoms/yaml_to_json.h"

namespace frugal::study {
namespace {

namespace fs = std::filesystem;

std::string number(double value) { return format_number(value); }

std::string resolve_path(const std::string& folder, const std::string& path) {
  if (path.empty() || fs::path(path).is_absolute()) return path;
  return (fs::path(folder) / path).lexically_normal().string();
}

// A scenario or rater given as a file name (relative to the study) or written inline.
template <class Options, class FromFile, class FromNode>
Options file_or_inline(YamlFields& fields, const std::string& key, const std::string& folder, std::string& source,
                       const FromFile& from_file, const FromNode& from_node) {
  const YAML::Node node = fields.node()[key];
  if (node.IsMap()) {
    source = "inline";
    fields.child(key);  // marks the key as read
    return from_node(node);
  }
  std::string path;
  fields.read(key, path);
  if (path.empty()) fields.fail(key, "must name a file or hold the settings inline");
  source = resolve_path(folder, path);
  std::error_code ignored;
  if (!fs::is_regular_file(source, ignored))
    fields.fail(key, "names " + source +
                         ", which is not a file; allowed: a YAML file (relative to the study file) "
                         "or the settings inline");
  return from_file(source);
}

// The label kinds a plan may name (label.cpp's names), with "none" for plans of classical strategies.
const std::vector<std::string>& kind_names() {
  static const std::vector<std::string> names{"none", "presence", "count", "grade", "points", "partial", "outline"};
  return names;
}

std::string list(const std::vector<std::string>& names) {
  std::string out;
  for (const std::string& name : names) out += (out.empty() ? "" : ", ") + name;
  return out;
}

std::string kinds_text(const std::vector<LabelKind>& kinds) {
  std::vector<std::string> names;
  for (LabelKind kind : kinds) names.push_back(to_string(kind));
  return names.empty() ? "none (it needs no labels)" : list(names);
}

// The strategies a plain (not mixed) plan of this kind can train, for "allowed" in messages.
std::string strategies_for(bool labelled, LabelKind kind) {
  using learn::Strategy;
  static const Strategy all[] = {Strategy::mask,          Strategy::mask_robust, Strategy::partial,
                                 Strategy::partial_naive, Strategy::count_map,   Strategy::grade_bounds,
                                 Strategy::presence_mil,  Strategy::points,      Strategy::scalar,
                                 Strategy::mixed,         Strategy::threshold,   Strategy::line_filter};
  std::vector<std::string> names;
  for (Strategy strategy : all) {
    if (strategy == Strategy::mixed) continue;
    const std::vector<LabelKind> accepted = learn::accepted_label_kinds(strategy);
    const bool fits =
        labelled ? std::find(accepted.begin(), accepted.end(), kind) != accepted.end() : learn::is_classical(strategy);
    if (fits) names.push_back(learn::to_string(strategy));
  }
  return list(names);
}

LabelPlan read_plan(YamlFields& plans, const std::string& name, const std::string& folder, const std::string& file) {
  YamlFields fields = plans.child(name);
  LabelPlan plan;
  plan.name = name;
  std::vector<std::string> strategies;
  fields.require("strategies");
  fields.read("strategies", strategies);
  if (strategies.empty())
    fields.fail("strategies", "is empty; allowed: a list of one or more strategy names to train on this plan");
  for (const std::string& strategy : strategies) {
    try {
      plan.strategies.push_back(learn::strategy_from_string(strategy));
    } catch (const UserError& error) {
      fields.fail("strategies", error.what());
    }
  }
  if (fields.has("strong") || fields.has("weak")) {
    fields.require("strong");
    fields.require("weak");
    fields.require("strong_share");
    fields.read("strong", plan.strong);
    fields.read("weak", plan.weak);
    fields.read("strong_share", plan.strong_share);
    if (!(plan.strong_share > 0.0 && plan.strong_share < 1.0))
      fields.fail("strong_share",
                  "= " + number(plan.strong_share) + ": allowed (0, 1), the strong plan's share of each budget");
    for (learn::Strategy strategy : plan.strategies)
      if (strategy != learn::Strategy::mixed)
        fields.fail("strategies",
                    "names " + learn::to_string(strategy) + "; allowed on a mixed plan (strong + weak): mixed only");
    fields.finish();
    return plan;
  }
  fields.require("kind");
  std::string kind;
  fields.read("kind", kind);
  if (std::find(kind_names().begin(), kind_names().end(), kind) == kind_names().end())
    fields.fail("kind", "is '" + kind + "'; allowed: " + list(kind_names()));
  plan.labelled = kind != "none";
  if (plan.labelled) {
    plan.kind = label_kind_from_string(kind);
    fields.require("rater");
    plan.rater = file_or_inline<RaterOptions>(
        fields, "rater", folder, plan.rater_file, [](const std::string& path) { return read_rater_file(path); },
        [&](const YAML::Node& node) { return read_rater(node, file); });
    plan.raters_per_image = plan.rater.panel.raters;
    fields.read("raters_per_image", plan.raters_per_image);
    if (plan.raters_per_image < 1 || plan.raters_per_image > plan.rater.panel.raters)
      fields.fail("raters_per_image", "= " + std::to_string(plan.raters_per_image) + ": allowed 1 to " +
                                          std::to_string(plan.rater.panel.raters) + " (the rater panel's size)");
    if (fields.has("scope")) {
      if (plan.kind != LabelKind::count)
        fields.fail("scope", "is for count plans only; allowed: no scope key on a plan of kind " + kind);
      std::string scope;
      fields.read("scope", scope);
      try {
        plan.scope = count_scope_from_string(scope);
      } catch (const UserError& error) {
        fields.fail("scope", error.what());
      }
    }
  }
  for (learn::Strategy strategy : plan.strategies) {
    const std::vector<LabelKind> accepted = learn::accepted_label_kinds(strategy);
    const std::string allowed = "; allowed on a plan of kind " + kind + ": " + strategies_for(plan.labelled, plan.kind);
    if (strategy == learn::Strategy::mixed)
      fields.fail("strategies",
                  "names mixed, which trains on a mixed plan only (keys strong, weak, strong_share)" + allowed);
    const bool fits = plan.labelled ? std::find(accepted.begin(), accepted.end(), plan.kind) != accepted.end()
                                    : learn::is_classical(strategy);
    if (!fits)
      fields.fail("strategies",
                  "names " + learn::to_string(strategy) + ", which trains on " + kinds_text(accepted) + allowed);
  }
  fields.finish();
  return plan;
}

// The least one image's labels can cost under a plan: the per-image terms of its raters.
double cheapest_image_seconds(const LabelPlan& plan) {
  const CostOptions& c = plan.rater.cost;
  double per_image = 0.0;
  switch (plan.kind) {
    case LabelKind::presence:
      per_image = c.presence_per_image_s;
      break;
    case LabelKind::count:
      per_image = c.count_per_image_s;
      break;
    case LabelKind::grade:
      per_image = c.grade_per_image_s;
      break;
    case LabelKind::points:
      per_image = c.points_per_image_s;
      break;
    case LabelKind::partial_mask:
      per_image = c.partial_per_image_s;
      break;
    case LabelKind::outline:
      per_image = c.outline_per_image_s;
      break;
  }
  return per_image * plan.raters_per_image;
}

}  // namespace

const LabelPlan* StudyOptions::plan(const std::string& wanted) const {
  for (const LabelPlan& candidate : plans)
    if (candidate.name == wanted) return &candidate;
  return nullptr;
}

std::vector<std::string> default_quantities(Family family) {
  return family == Family::voids ? std::vector<std::string>{"affected_fraction"} : std::vector<std::string>{"count"};
}

const std::vector<std::string>& known_quantities() {
  static const std::vector<std::string> names{"count", "affected_fraction", "burden_mm3", "grade", "presence"};
  return names;
}

std::string CohortOptions::validate() const {
  if (pool < 1 || pool > kMaxPool)
    return "pool = " + std::to_string(pool) + ": allowed 1 to " + std::to_string(kMaxPool);
  if (test < 3 || test > kMaxTest)
    return "test = " + std::to_string(test) + ": allowed 3 to " + std::to_string(kMaxTest) +
           " (agreement statistics need at least 3 subjects)";
  if (test_rescans < 0 || test_rescans > 10)
    return "test_rescans = " + std::to_string(test_rescans) + ": allowed 0 to 10";
  return "";
}

StudyOptions read_study(const YAML::Node& root, const std::string& file, const std::string& folder) {
  YamlFields fields(root, file, "");
  StudyOptions study;
  study.file = file;
  fields.require("name");
  fields.read("name", study.name);
  if (!is_printable_name(study.name))
    fields.fail("name", "is empty, blank or holds control characters; allowed: printable text naming the study");
  fields.require("scenario");
  study.scenario = file_or_inline<ScenarioOptions>(
      fields, "scenario", folder, study.scenario_file, [](const std::string& path) { return read_scenario_file(path); },
      [&](const YAML::Node& node) { return read_scenario(node, file); });
  if (fields.has("seed")) {
    std::string text;
    fields.read("seed", text);
    const bool digits = !text.empty() && text.size() <= 20 &&
                        std::all_of(text.begin(), text.end(), [](char c) { return c >= '0' && c <= '9'; });
    if (!digits || (text.size() == 20 && text > "18446744073709551615"))
      fields.fail("seed", "is '" + text + "'; allowed: a whole number from 0 to 18446744073709551615");
    study.seed = std::stoull(text);
  }
  fields.require("cohort");
  {
    YamlFields cohort = fields.child("cohort");
    cohort.require("pool");
    cohort.require("test");
    cohort.read("pool", study.cohort.pool);
    cohort.read("test", study.cohort.test);
    cohort.read("test_rescans", study.cohort.test_rescans);
    cohort.read("decorrelated_test", study.cohort.decorrelated_test);
    cohort.finish();
    if (const std::string error = key_path_under("cohort", study.cohort.validate()); !error.empty())
      throw UserError(file + ":" + std::to_string(line_of_key_path(root, key_path_of(error))) + ": " + error +
                      " (see docs/studies.md)");
    if (study.cohort.decorrelated_test && study.scenario.confounder.factor == ConfounderFactor::none)
      cohort.fail("decorrelated_test",
                  "is true, but the scenario has no confounder (scenario key "
                  "confounder.factor); allowed: false, or a scenario with a confounder");
  }
  fields.require("plans");
  {
    YamlFields plans = fields.child("plans");
    std::set<std::string> names;
    for (const auto& entry : plans.node()) {
      const std::string name = entry.first.as<std::string>();
      if (!names.insert(name).second)
        throw UserError(file + ":" + std::to_string(entry.first.Mark().line + 1) + ": 'plans." + name +
                        "' is a second plan of that name; allowed: each plan name once");
      study.plans.push_back(read_plan(plans, name, folder, file));
    }
    if (study.plans.empty()) fields.fail("plans", "is empty; allowed: one or more label plans (plans.<name>)");
    plans.finish();
    for (const LabelPlan& plan : study.plans) {
      if (!plan.is_mixed()) continue;
      const LabelPlan* strong = study.plan(plan.strong);
      const LabelPlan* weak = study.plan(plan.weak);
      // Messages point at the strong or weak key itself.
      const auto fail = [&](const std::string& key, const std::string& message) {
        const std::string where = "plans." + plan.name + "." + key;
        throw UserError(file + ":" + std::to_string(line_of_key_path(root, where)) + ": '" + where + "' " + message);
      };
      if (strong == nullptr || strong->is_mixed() || !strong->labelled || strong->kind != LabelKind::outline)
        fail("strong", "names strong plan '" + plan.strong + "'; allowed: a plan of kind outline in this study");
      if (weak == nullptr || weak->is_mixed() || !weak->labelled ||
          !(weak->kind == LabelKind::count || weak->kind == LabelKind::grade || weak->kind == LabelKind::presence))
        fail("weak",
             "names weak plan '" + plan.weak + "'; allowed: a plan of kind count, grade or presence in this study");
    }
  }
  std::string unit = "hours";
  fields.read("budget_unit", unit);
  if (unit != "hours" && unit != "labels") fields.fail("budget_unit", "is '" + unit + "'; allowed: hours, labels");
  study.budget_unit = unit == "hours" ? BudgetUnit::hours : BudgetUnit::labels;
  bool needs_budgets = false;
  for (const LabelPlan& plan : study.plans)
    for (learn::Strategy strategy : plan.strategies) needs_budgets = needs_budgets || !learn::is_classical(strategy);
  if (needs_budgets) fields.require("budgets");
  fields.read("budgets", study.budgets);
  for (std::size_t i = 0; i < study.budgets.size(); ++i) {
    const double budget = study.budgets[i];
    if (!(std::isfinite(budget) && budget > 0.0))
      fields.fail("budgets",
                  "entry " + std::to_string(i + 1) + " = " + number(budget) + ": allowed a positive number of " + unit);
    if (study.budget_unit == BudgetUnit::labels && budget != std::floor(budget))
      fields.fail("budgets", "entry " + std::to_string(i + 1) + " = " + number(budget) +
                                 ": allowed whole numbers (budget_unit labels)");
    if (i > 0 && budget <= study.budgets[i - 1])
      fields.fail("budgets", "entry " + std::to_string(i + 1) + " = " + number(budget) +
                                 " is not above the one before; allowed: ascending budgets, each once");
  }
  if (needs_budgets && study.budgets.empty())
    fields.fail("budgets", "is empty; allowed: a list of one or more budgets in " + unit);
  // A budget must buy at least one image's labels in every plan it applies to, and a plain plan
  // the 2 labels training needs (learner.cpp); a mixed plan's two parts give one image each.
  if (!study.budgets.empty())
    for (const LabelPlan& plan : study.plans) {
      if (!plan.labelled) continue;
      const auto check = [&](const LabelPlan& part, double share) {
        const double smallest = study.budgets.front() * share;
        const int images = share < 1.0 || part.raters_per_image >= 2 ? 1 : 2;
        const bool too_small = study.budget_unit == BudgetUnit::hours
                                   ? smallest * 3600.0 < images * cheapest_image_seconds(part)
                                   : std::floor(smallest + 1e-9) < images;
        if (!too_small) return;
        const std::string cost = study.budget_unit == BudgetUnit::hours
                                     ? ": one image costs at least " + number(cheapest_image_seconds(part)) + " s"
                                     : "";
        const std::string share_text =
            share < 1.0 ? " (its share " + number(share) + " in plan " + plan.name + ")" : "";
        const std::string start = "entry 1 = " + number(study.budgets.front()) + " " + unit;
        if (images == 1)
          fields.fail("budgets", start + " buys no label of plan " + part.name + share_text + cost +
                                     "; allowed: budgets that buy at least one image");
        fields.fail("budgets", start + " buys at most one image of plan " + part.name +
                                   " (1 label per image), and training needs 2 labels" + cost +
                                   "; allowed: budgets that buy at least 2 images");
      };
      if (plan.is_mixed()) {
        check(*study.plan(plan.strong), plan.strong_share);
        check(*study.plan(plan.weak), 1.0 - plan.strong_share);
      } else {
        check(plan, 1.0);
      }
    }
  fields.read("repeats", study.repeats);
  if (study.repeats < 1 || study.repeats > kMaxRepeats)
    fields.fail("repeats", "= " + std::to_string(study.repeats) + ": allowed 1 to " + std::to_string(kMaxRepeats) +
                               " (3 or more give intervals over repeats)");
  fields.read("training_images", study.training_images);
  if (study.training_images < 0)
    fields.fail("training_images",
                "= " + std::to_string(study.training_images) + ": allowed 0 (use train.epochs) or more");
  fields.read("threads", study.threads);
  if (study.threads < 1 || study.threads > 256)
    fields.fail("threads", "= " + std::to_string(study.threads) + ": allowed 1 to 256");
  study.quantities = default_quantities(study.scenario.family);
  fields.read("quantities", study.quantities);
  for (const std::string& quantity : study.quantities)
    if (std::find(known_quantities().begin(), known_quantities().end(), quantity) == known_quantities().end())
      fields.fail("quantities", "names '" + quantity + "'; allowed: " + list(known_quantities()));
  if (study.quantities.empty())
    fields.fail("quantities", "is empty; allowed: one or more of " + list(known_quantities()));

  // Training settings shared by every cell: the keys of TrainOptions (docs/studies.md).
  // Fractions refer to the family's field (a lung-like field excludes the air around the body).
  study.train.field = learn::default_field_for_family(to_string(study.scenario.family));
  if (fields.has("train")) {
    YamlFields train = fields.child("train");
    const YAML::Node node = root["train"];
    try {
      learn::update_from_json(yaml_to_json(node), study.train, "train");
    } catch (const UserError& error) {
      const std::string message = error.what();
      const int line = line_of_key_path(root, key_path_of(message));
      throw UserError(file + ":" + std::to_string(line) + ": " + message + " (see docs/studies.md)");
    }
    if (node["strategy"])
      train.fail("strategy", "is set per plan (plans.<name>.strategies), not here; allowed: no train.strategy key");
    if (node["threads"])
      train.fail("threads",
                 "is set at the top level (threads) or with frugal run --threads; allowed: no "
                 "train.threads key");
  }
  if (const std::string error = key_path_under("train", study.train.validate()); !error.empty()) {
    const int line = line_of_key_path(root, key_path_of(error));
    throw UserError(file + ":" + std::to_string(line) + ": " + error + " (see docs/studies.md)");
  }
  // Grade strategies read a grade through train.grading's bins; the raters grade in their own.
  for (const LabelPlan& plan : study.plans) {
    if (!plan.labelled || plan.is_mixed() || plan.kind != LabelKind::grade) continue;
    if (plan.rater.grading.bin_edges == study.train.grading.bin_edges) continue;
    const auto edges = [](const std::vector<double>& values) {
      std::string out;
      for (double value : values) out += (out.empty() ? "" : ", ") + number(value);
      return "[" + out + "]";
    };
    const std::string where = "plans." + plan.name + ".rater";
    throw UserError(file + ":" + std::to_string(line_of_key_path(root, where)) + ": '" + where + "' grades with " +
                    "grading.bin_edges " + edges(plan.rater.grading.bin_edges) + ", but train.grading.bin_edges is " +
                    edges(study.train.grading.bin_edges) + "; allowed: the same bins (set train.grading.bin_edges " +
                    "to the rater's)");
  }
  fields.finish();
  return study;
}

StudyOptions read_study_file(const std::string& file) {
  return read_study(load_yaml_file(file), file, fs::path(file).parent_path().string());
}

}  // namespace frugal::study
