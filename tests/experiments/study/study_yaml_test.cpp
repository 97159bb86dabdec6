#include "experiments/study/study_yaml.h"

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <set>
#include <string>
#include <vector>

#include "experiments/study/cell.h"
#include "phantoms/user_error.h"

namespace frugal::study {
namespace {

namespace fs = std::filesystem;

const std::string kSource = FRUGAL_SOURCE_DIR;

// The study text with @S@ and @R@ replaced by the absolute scenario and rater folders.
std::string with_paths(std::string text) {
  const std::vector<std::pair<std::string, std::string>> folders{{"@S@", kSource + "/scenarios"},
                                                                 {"@R@", kSource + "/raters"}};
  for (const auto& [token, folder] : folders)
    for (std::size_t at = text.find(token); at != std::string::npos; at = text.find(token, at + folder.size()))
      text.replace(at, token.size(), folder);
  return text;
}

std::string scratch_file(const std::string& name) {
  const char* folder = std::getenv("TEST_TMPDIR");
  const fs::path path = fs::path(folder != nullptr ? folder : ::testing::TempDir()) / (name + ".yaml");
  return path.string();
}

// Writes the study to the scratch folder and returns read_study_file's message ("" when read).
std::string read_error(const std::string& name, const std::string& text, std::string& file) {
  file = scratch_file(name);
  {
    std::ofstream out(file, std::ios::binary | std::ios::trunc);
    out << with_paths(text);
  }
  try {
    read_study_file(file);
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

// Lines 1-3 of every bad study: a valid name, scenario and cohort. Cases that break one of these
// write their own first lines.
const std::string kHead =
    "name: bad-study\n"
    "scenario: @S@/ageing-cohort-streaks-small.yaml\n"
    "cohort: {pool: 40, test: 5}\n";

// Lines 4-8: one valid count plan (the quick panel has 2 raters, 12 s per count image).
const std::string kCountPlan =
    "plans:\n"
    "  quick-counts:\n"
    "    kind: count\n"
    "    rater: @R@/quick-reader.yaml\n"
    "    strategies: [count-map]\n";

struct BadStudy {
  std::string name;
  std::string yaml;
  int line = 0;                    // 1-based line the message must name, counted in `yaml`
  std::vector<std::string> words;  // key path and what is allowed, as the message words them
};

std::ostream& operator<<(std::ostream& out, const BadStudy& c) { return out << c.name; }

// Every expected line and word: common practice, no source (strict readers name file, line, key
// path and what is allowed; DEVELOPERS.md "Options -> validate").
std::vector<BadStudy> catalogue() {
  const std::string mixed_plans =  // lines 4-15
      "plans:\n"
      "  quick-counts:\n"
      "    kind: count\n"
      "    rater: @R@/quick-reader.yaml\n"
      "    strategies: [count-map]\n"
      "  careful-outlines:\n"
      "    kind: outline\n"
      "    rater: @R@/careful-reader.yaml\n"
      "    strategies: [mask]\n"
      "  outlines-plus-counts:\n"
      "    strong: careful-outlines\n"
      "    weak: quick-counts\n";
  return {
      {"unknown_top_level_key",
       kHead + kCountPlan + "budgets: [1]\nbudget: [2]\n",
       10,
       {"'budget' is not a key", "allowed:", "budgets", "repeats"}},
      {"unknown_key_in_plan",
       kHead + kCountPlan + "    colour: red\nbudgets: [1]\n",
       9,
       {"'plans.quick-counts.colour' is not a key", "allowed:", "raters_per_image"}},
      {"unknown_strategy",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [count-map, count-mop]\nbudgets: [1]\n",
       8,
       {"'plans.quick-counts.strategies'", "count-mop", "allowed:", "count-map", "line-filter"}},
      {"strategy_cannot_train_on_kind",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [mask]\nbudgets: [1]\n",
       8,
       {"'plans.quick-counts.strategies'", "mask", "outline", "allowed", "count-map, scalar"}},
      {"mixed_strategy_on_plain_plan",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [mixed]\nbudgets: [1]\n",
       8,
       {"'plans.quick-counts.strategies'", "mixed", "strong", "allowed", "count-map, scalar"}},
      {"classical_strategy_on_labelled_plan",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [line-filter]\nbudgets: [1]\n",
       8,
       {"'plans.quick-counts.strategies'", "line-filter", "allowed", "count-map, scalar"}},
      {"learned_strategy_on_plan_without_labels",
       kHead + "plans:\n  no-labels:\n    kind: none\n    strategies: [count-map]\n",
       7,
       {"'plans.no-labels.strategies'", "count-map", "allowed", "threshold, line-filter"}},
      {"plain_strategy_on_mixed_plan",
       kHead + mixed_plans + "    strong_share: 0.25\n    strategies: [count-map]\nbudgets: [1]\n",
       17,
       {"'plans.outlines-plus-counts.strategies'", "count-map", "allowed", "mixed"}},
      {"mixed_plan_names_missing_strong_plan",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [count-map]\n  outlines-plus-counts:\n    strong: fine-outlines\n"
               "    weak: quick-counts\n    strong_share: 0.25\n    strategies: [mixed]\nbudgets: [1]\n",
       10,
       {"'plans.outlines-plus-counts.strong'", "fine-outlines", "allowed:", "kind outline"}},
      {"mixed_plan_weak_plan_is_outline",
       kHead + "plans:\n  careful-outlines:\n    kind: outline\n    rater: @R@/careful-reader.yaml\n"
               "    strategies: [mask]\n  outlines-twice:\n    strong: careful-outlines\n"
               "    weak: careful-outlines\n    strong_share: 0.25\n    strategies: [mixed]\nbudgets: [1]\n",
       11,
       {"'plans.outlines-twice.weak'", "careful-outlines", "allowed:", "count, grade or presence"}},
      {"mixed_plan_strong_share_zero",
       kHead + mixed_plans + "    strong_share: 0\n    strategies: [mixed]\nbudgets: [1]\n",
       16,
       {"'plans.outlines-plus-counts.strong_share'", "= 0", "allowed (0, 1)"}},
      {"mixed_plan_strong_share_above_one",
       kHead + mixed_plans + "    strong_share: 1.5\n    strategies: [mixed]\nbudgets: [1]\n",
       16,
       {"'plans.outlines-plus-counts.strong_share'", "= 1.5", "allowed (0, 1)"}},
      {"mixed_plan_without_strong_share",
       kHead + mixed_plans + "    strategies: [mixed]\nbudgets: [1]\n",
       13,
       {"'plans.outlines-plus-counts'", "missing the required key 'strong_share'"}},
      {"budget_negative",
       kHead + kCountPlan + "budgets: [-1, 2]\n",
       9,
       {"'budgets'", "entry 1 = -1", "allowed a positive number of hours"}},
      {"budget_zero",
       kHead + kCountPlan + "budgets: [0, 2]\n",
       9,
       {"'budgets'", "entry 1 = 0", "allowed a positive number of hours"}},
      {"budgets_not_ascending",
       kHead + kCountPlan + "budgets:\n  - 2\n  - 1\n",
       9,
       {"'budgets'", "entry 2 = 1", "allowed: ascending budgets"}},
      {"budget_buys_no_label",
       kHead + kCountPlan + "budgets: [0.001, 1]\n",
       9,
       {"'budgets'", "0.001 hours buys no label of plan quick-counts", "24 s", "allowed: budgets that buy"}},
      {"budget_buys_one_label_only",
       kHead + kCountPlan + "    raters_per_image: 1\nbudgets: [0.005, 1]\n",
       10,
       {"'budgets'", "0.005 hours buys at most one image of plan quick-counts", "training needs 2 labels", "12 s",
        "allowed: budgets that buy at least 2 images"}},
      {"label_budget_buys_one_label_only",
       kHead + kCountPlan + "    raters_per_image: 1\nbudget_unit: labels\nbudgets: [1, 5]\n",
       11,
       {"'budgets'", "1 labels buys at most one image", "allowed: budgets that buy at least 2 images"}},
      {"budget_share_buys_no_strong_label",
       kHead + mixed_plans + "    strong_share: 0.25\n    strategies: [mixed]\nbudgets: [0.09]\n",
       18,
       {"'budgets'", "careful-outlines (its share 0.25 in plan outlines-plus-counts)", "allowed: budgets that buy"}},
      {"label_budget_not_whole",
       kHead + kCountPlan + "budget_unit: labels\nbudgets: [2.5, 5]\n",
       10,
       {"'budgets'", "entry 1 = 2.5", "allowed", "whole number"}},
      {"budget_unit_unknown",
       kHead + kCountPlan + "budget_unit: minutes\nbudgets: [1]\n",
       9,
       {"'budget_unit' is 'minutes'", "allowed: hours, labels"}},
      {"budgets_missing",
       kHead + kCountPlan + "repeats: 1\n",
       1,
       {"the top level", "missing the required key 'budgets'"}},
      {"scenario_missing",
       "name: bad-study\ncohort: {pool: 40, test: 5}\n" + kCountPlan + "budgets: [1]\n",
       1,
       {"the top level", "missing the required key 'scenario'"}},
      {"scenario_file_missing",
       "name: bad-study\nscenario: @S@/no-such-scenario.yaml\ncohort: {pool: 40, test: 5}\n" + kCountPlan +
           "budgets: [1]\n",
       2,
       {"'scenario'", "no-such-scenario.yaml, which is not a file", "allowed: a YAML file"}},
      {"cohort_missing",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\n" + kCountPlan + "budgets: [1]\n",
       1,
       {"the top level", "missing the required key 'cohort'"}},
      {"cohort_test_two",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\ncohort:\n  pool: 40\n  test: 2\n" +
           kCountPlan + "budgets: [1]\n",
       5,
       {"cohort.test = 2", "allowed 3 to"}},
      {"cohort_pool_zero",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\ncohort:\n  pool: 0\n  test: 5\n" + kCountPlan +
           "budgets: [1]\n",
       4,
       {"cohort.pool = 0", "allowed 1 to 500000"}},
      {"cohort_unknown_key",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\ncohort:\n  pool: 40\n  test: 5\n  tests: 5\n" +
           kCountPlan + "budgets: [1]\n",
       6,
       {"'cohort.tests' is not a key", "allowed:", "test_rescans"}},
      {"decorrelated_test_without_confounder",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\ncohort:\n  pool: 40\n  test: 5\n"
       "  decorrelated_test: true\n" +
           kCountPlan + "budgets: [1]\n",
       6,
       {"'cohort.decorrelated_test'", "confounder", "allowed: false"}},
      {"repeats_wrong_type",
       kHead + kCountPlan + "budgets: [1]\nrepeats: three\n",
       10,
       {"'repeats' is 'three', which is not an integer", "allowed: a whole decimal number"}},
      {"repeats_zero", kHead + kCountPlan + "budgets: [1]\nrepeats: 0\n", 10, {"'repeats' = 0", "allowed 1 to 1000"}},
      {"duplicate_plan_names",
       kHead + kCountPlan +
           "  quick-counts:\n    kind: count\n    rater: @R@/careful-reader.yaml\n"
           "    strategies: [scalar]\nbudgets: [1]\n",
       9,
       {"'plans.quick-counts' appears twice", "first on line 5", "allowed:", "each once"}},
      {"plans_empty", kHead + "plans: {}\nbudgets: [1]\n", 4, {"'plans' is empty", "allowed:"}},
      {"plans_not_a_mapping", kHead + "plans: [quick-counts]\nbudgets: [1]\n", 4, {"'plans'", "must be a mapping"}},
      {"mixed_plan_names_itself",
       kHead + kCountPlan +
           "  mix:\n    strong: mix\n    weak: quick-counts\n    strong_share: 0.5\n"
           "    strategies: [mixed]\nbudgets: [1]\n",
       10,
       {"'plans.mix.strong'", "'mix'", "allowed: a plan of kind outline"}},
      {"grade_bins_differ_from_training",
       kHead + "plans:\n  quick-grades:\n    kind: grade\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [grade-bounds]\nbudgets: [1]\ntrain:\n  grading: {bin_edges: [0, 0.05]}\n",
       7,
       {"'plans.quick-grades.rater'", "[0, 0.03, 0.1, 0.25, 0.5]", "[0, 0.05]", "allowed: the same bins"}},
      {"train_not_a_mapping", kHead + kCountPlan + "budgets: [1]\ntrain: fast\n", 10, {"'train'", "must be a mapping"}},
      {"raters_per_image_above_panel",
       kHead + kCountPlan + "    raters_per_image: 3\nbudgets: [1]\n",
       9,
       {"'plans.quick-counts.raters_per_image' = 3", "allowed 1 to 2", "panel"}},
      {"raters_per_image_zero",
       kHead + kCountPlan + "    raters_per_image: 0\nbudgets: [1]\n",
       9,
       {"'plans.quick-counts.raters_per_image' = 0", "allowed 1 to 2"}},
      {"scope_on_outline_plan",
       kHead + "plans:\n  careful-outlines:\n    kind: outline\n    rater: @R@/careful-reader.yaml\n"
               "    scope: image\n    strategies: [mask]\nbudgets: [1]\n",
       8,
       {"'plans.careful-outlines.scope'", "count plans only", "allowed"}},
      {"scope_unknown",
       kHead + kCountPlan + "    scope: voxel\nbudgets: [1]\n",
       9,
       {"'plans.quick-counts.scope'", "voxel", "allowed"}},
      {"kind_unknown",
       kHead + "plans:\n  quick-counts:\n    kind: tally\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [count-map]\nbudgets: [1]\n",
       6,
       {"'plans.quick-counts.kind' is 'tally'", "allowed: none, presence, count, grade, points, partial, outline"}},
      {"kind_partial_mask_is_not_a_kind_name",
       kHead + "plans:\n  seeds:\n    kind: partial_mask\n    rater: @R@/quick-reader.yaml\n"
               "    strategies: [partial]\nbudgets: [1]\n",
       6,
       {"'plans.seeds.kind' is 'partial_mask'", "allowed:", "partial"}},
      {"kind_missing",
       kHead + "plans:\n  quick-counts:\n    rater: @R@/quick-reader.yaml\n    strategies: [count-map]\nbudgets: [1]\n",
       5,
       {"'plans.quick-counts'", "missing the required key 'kind'"}},
      {"rater_file_missing",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/no-such-reader.yaml\n"
               "    strategies: [count-map]\nbudgets: [1]\n",
       7,
       {"'plans.quick-counts.rater'", "not a file", "allowed: a YAML file"}},
      {"strategies_empty",
       kHead + "plans:\n  quick-counts:\n    kind: count\n    rater: @R@/quick-reader.yaml\n    strategies: "
               "[]\nbudgets: [1]\n",
       8,
       {"'plans.quick-counts.strategies' is empty", "allowed:"}},
      {"quantity_unknown",
       kHead + kCountPlan + "budgets: [1]\nquantities: [count, volume]\n",
       10,
       {"'quantities' names 'volume'", "allowed: count, affected_fraction, burden_mm3, grade, presence"}},
      {"quantities_empty",
       kHead + kCountPlan + "budgets: [1]\nquantities: []\n",
       10,
       {"'quantities' is empty", "allowed:"}},
      {"train_epochs_zero",
       kHead + kCountPlan + "budgets: [1]\ntrain:\n  patience: 2\n  epochs: 0\n",
       12,
       {"train.epochs = 0", "at least 1"}},
      {"train_unknown_key",
       kHead + kCountPlan + "budgets: [1]\ntrain:\n  epochs: 1\n  epoch: 2\n",
       12,
       {"train.epoch", "unknown key", "allowed:", "epochs", "batch_size"}},
      {"train_unknown_nested_key",
       kHead + kCountPlan + "budgets: [1]\ntrain:\n  augmentation:\n    flip: true\n",
       12,
       {"train.augmentation.flip", "unknown key", "allowed:", "flips"}},
      {"train_strategy_set",
       kHead + kCountPlan + "budgets: [1]\ntrain:\n  epochs: 1\n  strategy: mask\n",
       12,
       {"'train.strategy'", "plans.<name>.strategies", "allowed"}},
      {"train_threads_set",
       kHead + kCountPlan + "budgets: [1]\ntrain:\n  threads: 4\n",
       11,
       {"'train.threads'", "top level", "allowed"}},
      {"seed_negative",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\nseed: -1\ncohort: {pool: 40, test: 5}\n" +
           kCountPlan + "budgets: [1]\n",
       3,
       {"'seed' is '-1'", "allowed: a whole number from 0 to 18446744073709551615"}},
      {"seed_too_large",
       "name: bad-study\nscenario: @S@/ageing-cohort-streaks-small.yaml\nseed: 18446744073709551616\n"
       "cohort: {pool: 40, test: 5}\n" +
           kCountPlan + "budgets: [1]\n",
       3,
       {"'seed'", "allowed: a whole number from 0 to 18446744073709551615"}},
      {"name_empty",
       "name: ''\nscenario: @S@/ageing-cohort-streaks-small.yaml\ncohort: {pool: 40, test: 5}\n" + kCountPlan +
           "budgets: [1]\n",
       1,
       {"'name' is empty", "allowed:"}},
      {"threads_zero", kHead + kCountPlan + "budgets: [1]\nthreads: 0\n", 10, {"'threads' = 0", "allowed 1 to 256"}},
      {"training_images_negative",
       kHead + kCountPlan + "budgets: [1]\ntraining_images: -5\n",
       10,
       {"'training_images' = -5", "allowed 0"}},
  };
}

class StudyYamlBadStudies : public ::testing::TestWithParam<BadStudy> {};

TEST_P(StudyYamlBadStudies, AreRejectedWithFileLineKeyAndWhatIsAllowed) {
  const BadStudy& c = GetParam();
  std::string file;
  const std::string message = read_error(c.name, c.yaml, file);
  ASSERT_FALSE(message.empty()) << "accepted:\n" << with_paths(c.yaml);
  // "FILE:LINE: ..." at the start: common practice, no source (compilers' and linters' form).
  const std::string where = file + ":" + std::to_string(c.line) + ":";
  EXPECT_EQ(message.rfind(where, 0), 0U) << "expected " << where << " at the start of: " << message;
  // Key path and what is allowed: common practice, no source.
  for (const std::string& word : c.words)
    EXPECT_NE(message.find(word), std::string::npos) << word << " in: " << message;
}

INSTANTIATE_TEST_SUITE_P(Catalogue, StudyYamlBadStudies, ::testing::ValuesIn(catalogue()),
                         [](const ::testing::TestParamInfo<BadStudy>& param) { return param.param.name; });

TEST(StudyYamlCatalogue, CatalogueNamesAreDistinctAndMany) {
  std::set<std::string> names;
  for (const BadStudy& c : catalogue()) EXPECT_TRUE(names.insert(c.name).second) << c.name;
  // At least 25 cases: the brief for this file, no outside source.
  EXPECT_GE(names.size(), 25U);
}

// Every bundled study (studies/*.yaml) reads: the examples cannot rot (STYLE.md "Examples and docs
// that run").
TEST(StudyYamlBundledStudies, EveryStudyFileReads) {
  int read = 0;
  for (const auto& entry : fs::directory_iterator(kSource + "/studies")) {
    if (entry.path().extension() != ".yaml") continue;
    SCOPED_TRACE(entry.path().string());
    EXPECT_NO_THROW(read_study_file(entry.path().string()));
    ++read;
  }
  EXPECT_GE(read, 1);
}

TEST(StudyYamlBundledStudies, AgeingCohortReadsAsWritten) {
  const StudyOptions study = read_study_file(kSource + "/studies/ageing-cohort.yaml");
  // Expected values copied from studies/ageing-cohort.yaml itself: no outside source.
  EXPECT_EQ(study.name, "ageing-cohort-demo");
  EXPECT_EQ(study.seed, 2026U);
  EXPECT_EQ(study.cohort.pool, 2000);
  EXPECT_EQ(study.cohort.test, 100);
  ASSERT_EQ(study.plans.size(), 3U);
  EXPECT_EQ(study.plans[0].name, "quick-counts");
  EXPECT_EQ(study.plans[0].kind, LabelKind::count);
  EXPECT_EQ(study.plans[1].kind, LabelKind::outline);
  EXPECT_FALSE(study.plans[2].labelled);
  EXPECT_EQ(study.budgets, (std::vector<double>{1.0, 2.0, 4.0, 8.0, 16.0, 32.0}));
  EXPECT_EQ(study.budget_unit, BudgetUnit::hours);
  EXPECT_EQ(study.repeats, 3);
  EXPECT_EQ(study.training_images, 2200);
  EXPECT_EQ(study.train.epochs, 300);
  EXPECT_EQ(study.train.patience, 0);
  EXPECT_EQ(study.train.validation_fraction, 0.0);
  EXPECT_EQ(study.quantities, (std::vector<std::string>{"count"}));
  // Relative paths are taken from the study's folder (study_yaml.h).
  EXPECT_EQ(study.scenario_file, kSource + "/scenarios/ageing-cohort-streaks-small.yaml");
}

TEST(StudyYamlBundledStudies, ScreeningGradesReadsAsWritten) {
  const std::string file = kSource + "/studies/screening-grades.yaml";
  const StudyOptions study = read_study_file(file);
  EXPECT_EQ(study.scenario.family, Family::voids);
  EXPECT_EQ(study.cohort.test_rescans, 1);
  EXPECT_EQ(study.quantities, (std::vector<std::string>{"affected_fraction", "grade"}));
}

// Cells per study, from cell.h's documented expansion: plans x strategies x budgets x repeats,
// one cell per repeat at budget 0 for a classical strategy.
std::size_t expected_cells(const StudyOptions& study) {
  std::size_t per_repeat = 0;
  for (const LabelPlan& plan : study.plans)
    for (learn::Strategy strategy : plan.strategies)
      per_repeat += learn::is_classical(strategy) ? 1 : study.budgets.size();
  return per_repeat * static_cast<std::size_t>(study.repeats);
}

TEST(StudyYamlExpandCells, AgeingCohortGivesEveryCellOnceWithDistinctKeys) {
  const StudyOptions study = read_study_file(kSource + "/studies/ageing-cohort.yaml");
  const std::vector<CellSpec> cells = expand_cells(study);
  // 2 learned plans x 6 budgets x 3 repeats + 1 classical plan x 3 repeats, counted by hand from
  // the study file; the formula is cell.h's.
  EXPECT_EQ(cells.size(), 39U);
  EXPECT_EQ(cells.size(), expected_cells(study));
  std::set<std::string> keys;
  int classical = 0;
  for (const CellSpec& cell : cells) {
    keys.insert(cell_key(cell));
    if (learn::is_classical(cell.train.strategy)) {
      ++classical;
      EXPECT_EQ(cell.budget, 0.0) << cell.plan.name;
    }
  }
  EXPECT_EQ(keys.size(), cells.size());  // a key names one cell: cell.h
  EXPECT_EQ(classical, 3);               // one per repeat: cell.h
  // Fixed order, repeat first (cell.h).
  EXPECT_EQ(cells.front().repeat, 0);
  EXPECT_EQ(cells.back().repeat, 2);
}

TEST(StudyYamlExpandCells, SmallStudyCountsFollowTheFormula) {
  std::string file;
  const std::string text =
      kHead +
      "plans:\n"
      "  quick-counts: {kind: count, rater: @R@/quick-reader.yaml, strategies: [count-map, scalar]}\n"
      "  no-labels: {kind: none, strategies: [threshold, line-filter]}\n"
      "budgets: [1, 2, 4]\n"
      "repeats: 2\n";
  ASSERT_EQ(read_error("small_counts", text, file), "");
  const StudyOptions study = read_study_file(file);
  // (2 strategies x 3 budgets + 2 classical) x 2 repeats, by hand; the formula is cell.h's.
  EXPECT_EQ(expand_cells(study).size(), 16U);
  EXPECT_EQ(expand_cells(study).size(), expected_cells(study));
}

// Every label kind a plan can name reads with a strategy that trains on it (learner.h's table).
TEST(StudyYamlExpandCells, EveryLabelKindMakesAPlan) {
  const std::vector<std::pair<std::string, std::string>> kinds{{"presence", "presence-mil"}, {"count", "count-map"},
                                                               {"grade", "grade-bounds"},    {"points", "points"},
                                                               {"partial", "partial"},       {"outline", "mask"}};
  for (const auto& [kind, strategy] : kinds) {
    SCOPED_TRACE(kind);
    std::string file;
    const std::string text = kHead + "plans:\n  one:\n    kind: " + kind + "\n    rater: @R@/careful-reader.yaml\n" +
                             "    strategies: [" + strategy + "]\nbudgets: [1]\nrepeats: 1\n";
    EXPECT_EQ(read_error("kind_" + kind, text, file), "");
    if (::testing::Test::HasFailure()) continue;
    const StudyOptions study = read_study_file(file);
    ASSERT_EQ(study.plans.size(), 1U);
    EXPECT_EQ(to_string(study.plans.front().kind), kind);
    EXPECT_EQ(expand_cells(study).size(), 1U);  // one strategy x one budget x one repeat: cell.h
  }
}

TEST(StudyYamlCellKey, IgnoresThreadsAndFollowsTheBudget) {
  const StudyOptions study = read_study_file(kSource + "/studies/ageing-cohort.yaml");
  const std::vector<CellSpec> cells = expand_cells(study);
  ASSERT_FALSE(cells.empty());
  const CellSpec& cell = cells.front();
  // Threads change no number (cell.h: the key hashes the cell without its thread count).
  CellSpec more_threads = cell;
  more_threads.threads = cell.threads + 5;
  more_threads.train.threads = cell.train.threads + 5;
  EXPECT_EQ(cell_key(more_threads), cell_key(cell));
  StudyOptions threaded = study;
  threaded.threads = study.threads + 3;
  const std::vector<CellSpec> threaded_cells = expand_cells(threaded);
  ASSERT_EQ(threaded_cells.size(), cells.size());
  for (std::size_t i = 0; i < cells.size(); ++i) EXPECT_EQ(cell_key(threaded_cells[i]), cell_key(cells[i])) << i;
  // The budget is part of the cell's identity (cell.h).
  CellSpec other_budget = cell;
  other_budget.budget = cell.budget + 1.0;
  EXPECT_NE(cell_key(other_budget), cell_key(cell));
  // The same cell always gives the same key: a SHA-256 is 64 hex digits (FIPS 180-4).
  EXPECT_EQ(cell_key(cell), cell_key(cells.front()));
  EXPECT_EQ(cell_key(cell).size(), 64U);
}

TEST(StudyYamlStudyHash, IgnoresThreadsButNotBudgets) {
  const StudyOptions study = read_study_file(kSource + "/studies/ageing-cohort.yaml");
  StudyOptions threaded = study;
  threaded.threads = study.threads + 3;
  threaded.train.threads = study.train.threads + 3;
  // cell.h: the study's hash is over the resolved study, threads excepted.
  EXPECT_EQ(study_hash(threaded), study_hash(study));
  StudyOptions other_budgets = study;
  other_budgets.budgets.back() += 1.0;
  EXPECT_NE(study_hash(other_budgets), study_hash(study));
  // SHA-256 of the empty string, FIPS 180-4 example (e3b0c442...b855).
  EXPECT_EQ(sha256_hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

// A stored cell (spec_json) reads back into the same cell: every cell of every bundled study,
// mixed plans and classical strategies included, gives the same JSON and the same key (a round
// trip; common practice, no source).
TEST(StudyYamlCellJson, EveryBundledCellSurvivesTheRoundTrip) {
  // The bundled studies have no mixed plan: add one.
  const std::string mixed = scratch_file("cell_json_mixed");
  {
    std::ofstream out(mixed, std::ios::binary | std::ios::trunc);
    out << with_paths(kHead +
                      "plans:\n  counts: {kind: count, rater: @R@/quick-reader.yaml, strategies: [count-map]}\n"
                      "  outlines: {kind: outline, rater: @R@/careful-reader.yaml, strategies: [mask]}\n"
                      "  mix: {strong: outlines, weak: counts, strong_share: 0.5, strategies: [mixed]}\n"
                      "budgets: [1, 2]\n");
  }
  std::vector<std::string> files{mixed};
  for (const auto& entry : fs::directory_iterator(kSource + "/studies"))
    if (entry.path().extension() == ".yaml") files.push_back(entry.path().string());
  int cells = 0, mixed_cells = 0;
  for (const std::string& file : files) {
    for (const CellSpec& cell : expand_cells(read_study_file(file))) {
      mixed_cells += cell.plan.is_mixed() ? 1 : 0;
      const CellSpec read = cell_from_json(to_json(cell));
      EXPECT_EQ(to_json(read), to_json(cell)) << file << " cell " << cells;
      EXPECT_EQ(cell_key(read), cell_key(cell));
      ++cells;
    }
  }
  EXPECT_GE(cells, 10);
  EXPECT_GE(mixed_cells, 1);
}

TEST(StudyYamlCellJson, ADamagedSpecIsAUserErrorNamingTheKey) {
  const CellSpec cell = expand_cells(read_study_file(kSource + "/studies/ageing-cohort.yaml")).front();
  nlohmann::json tree = to_json(cell);
  tree["train"]["epochs"] = 0;
  try {
    cell_from_json(tree);
    ADD_FAILURE() << "epochs 0 was read";
  } catch (const UserError& error) {
    EXPECT_EQ(std::string(error.what()).rfind("spec_json.train.epochs = 0", 0), 0U) << error.what();
  }
  tree = to_json(cell);
  tree.erase("cohort");
  EXPECT_THROW(cell_from_json(tree), UserError);
  tree = to_json(cell);
  tree["plan"]["rater"]["counting"]["slip_probability"] = 2.0;
  EXPECT_THROW(cell_from_json(tree), UserError);
}

}  // namespace
}  // namespace frugal::study
