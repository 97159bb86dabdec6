// Tests of running studies: a tiny study end to end into a store, nested budgets, a cell alone
// against the same cell inside a study and after another cell, two shards merged against one
// full run, and resume after SIGKILL at random moments. The reference for every comparison is
// frugal's own uninterrupted single-process run (determinism and exactness are the properties
// under test; common practice, no source).

#include <fcntl.h>
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <random>
#include <set>
#include <string>
#include <thread>

#include "experiments/store/results_store.h"
#include "experiments/study/cell.h"
#include "experiments/study/cell_runner.h"
#include "experiments/study/study_runner.h"
#include "experiments/study/study_yaml.h"

namespace frugal::study {
namespace {

namespace fs = std::filesystem;

fs::path scratch(const std::string& name) {
  const char* root = std::getenv("TEST_TMPDIR");
  fs::path folder = fs::path(root != nullptr ? root : ::testing::TempDir()) / name;
  fs::remove_all(folder);
  fs::create_directories(folder);
  return folder;
}

// Small enough to run in seconds: 32 x 32 slices, a 40-subject pool, 6 test subjects (2 rescans),
// two plans with two label budgets each, two repeats, two epochs.
std::string tiny_study_text(const std::string& unit = "labels", const std::string& budgets = "[4, 8]",
                            int repeats = 2) {
  const std::string source = FRUGAL_SOURCE_DIR;
  return "name: tiny\n"
         "seed: 11\n"
         "scenario:\n"
         "  family: streaks\n"
         "  geometry: {dims: 2, size_2d: [32, 32]}\n"
         "  streaks:\n"
         "    count: {distribution: poisson, mean: 2}\n"
         "    dots: {distribution: poisson, mean: 1}\n"
         "    lines: {distribution: poisson, mean: 0}\n"
         "cohort: {pool: 40, test: 6, test_rescans: 1}\n"
         "plans:\n"
         "  counts:\n"
         "    kind: count\n"
         "    rater: " + source + "/raters/quick-reader.yaml\n"
         "    strategies: [count-map]\n"
         "  outlines:\n"
         "    kind: outline\n"
         "    rater: " + source + "/raters/careful-reader.yaml\n"
         "    raters_per_image: 1\n"
         "    strategies: [mask]\n"
         "  mix:\n"
         "    strong: outlines\n"
         "    weak: counts\n"
         "    strong_share: 0.5\n"
         "    strategies: [mixed]\n"
         "  filter:\n"
         "    kind: none\n"
         "    strategies: [line-filter]\n"
         "budgets: " + budgets + "\n"
         "budget_unit: " + unit + "\n"
         "repeats: " + std::to_string(repeats) + "\n"
         "train: {epochs: 2, width: 4, depth: 2, batch_size: 4}\n"
         "threads: 1\n"
         "quantities: [count, presence]\n";
}

fs::path write_study(const fs::path& folder, const std::string& text) {
  const fs::path file = folder / "study.yaml";
  std::ofstream(file) << text;
  return file;
}

// Everything but the timing columns, which no two runs share.
void expect_same_cell(const store::CellRecord& a, const store::CellRecord& b) {
  SCOPED_TRACE(a.plan + " / " + a.strategy + " / " + std::to_string(a.budget) + " / repeat " + std::to_string(a.repeat));
  EXPECT_EQ(a.key, b.key);
  EXPECT_EQ(a.status, b.status);
  EXPECT_EQ(a.error, b.error);
  EXPECT_EQ(a.labels_bought, b.labels_bought);
  EXPECT_EQ(a.hours_spent, b.hours_spent);
  EXPECT_EQ(a.spec_json, b.spec_json);
  ASSERT_EQ(a.metrics.size(), b.metrics.size());
  for (std::size_t i = 0; i < a.metrics.size(); ++i) {
    EXPECT_EQ(a.metrics[i].metric, b.metrics[i].metric);
    if (std::isnan(a.metrics[i].value)) {
      EXPECT_TRUE(std::isnan(b.metrics[i].value)) << a.metrics[i].metric;
    } else {
      EXPECT_EQ(a.metrics[i].value, b.metrics[i].value) << a.metrics[i].test_set << " " << a.metrics[i].metric;
    }
  }
  ASSERT_EQ(a.predictions.size(), b.predictions.size());
  for (std::size_t i = 0; i < a.predictions.size(); ++i) {
    EXPECT_EQ(a.predictions[i].subject, b.predictions[i].subject);
    if (!std::isnan(a.predictions[i].predicted)) {
      EXPECT_EQ(a.predictions[i].predicted, b.predictions[i].predicted);
    }
    EXPECT_EQ(a.predictions[i].truth, b.predictions[i].truth);
  }
  ASSERT_EQ(a.training_curve.size(), b.training_curve.size());
  for (std::size_t i = 0; i < a.training_curve.size(); ++i)
    EXPECT_EQ(a.training_curve[i].training_loss, b.training_curve[i].training_loss);
  ASSERT_EQ(a.label_costs.size(), b.label_costs.size());
  for (std::size_t i = 0; i < a.label_costs.size(); ++i) {
    EXPECT_EQ(a.label_costs[i].subject, b.label_costs[i].subject);
    EXPECT_EQ(a.label_costs[i].seconds, b.label_costs[i].seconds);
  }
  ASSERT_EQ(a.example_maps.size(), b.example_maps.size());
  for (std::size_t i = 0; i < a.example_maps.size(); ++i) {
    EXPECT_EQ(a.example_maps[i].role, b.example_maps[i].role);
    EXPECT_EQ(a.example_maps[i].caption, b.example_maps[i].caption);
    EXPECT_EQ(a.example_maps[i].pixels, b.example_maps[i].pixels) << a.example_maps[i].role;
  }
}

void expect_same_store(const std::vector<store::CellRecord>& a, const std::vector<store::CellRecord>& b) {
  ASSERT_EQ(a.size(), b.size());
  for (std::size_t i = 0; i < a.size(); ++i) expect_same_cell(a[i], b[i]);
}

double metric(const store::CellRecord& cell, const std::string& set, const std::string& quantity,
              const std::string& name) {
  for (const store::MetricRow& row : cell.metrics)
    if (row.test_set == set && row.quantity == quantity && row.metric == name) return row.value;
  ADD_FAILURE() << "no metric " << set << "/" << quantity << "/" << name;
  return 0.0;
}

TEST(StudyRunner, TinyStudyFillsTheStoreAsTheStudySays) {
  const fs::path folder = scratch("tiny_end_to_end");
  const StudyOptions study = read_study_file(write_study(folder, tiny_study_text()).string());
  RunOptions options;
  options.store_path = (folder / "results.db").string();
  const RunSummary summary = run_study(study, options);
  // 3 labelled plans x 2 budgets x 2 repeats, plus the line filter once per repeat.
  EXPECT_EQ(summary.cells_study, 14);
  EXPECT_EQ(summary.done, 14);
  EXPECT_EQ(summary.failed, 0);
  const store::ResultsStore results = store::ResultsStore::open_existing(options.store_path);
  EXPECT_EQ(results.study().cells_total, 14);
  EXPECT_EQ(results.study().study_hash, study_hash(study));
  for (const store::CellRecord& cell : results.cells()) {
    SCOPED_TRACE(cell.plan + " " + std::to_string(cell.budget));
    EXPECT_EQ(cell.status, "done");
    if (cell.plan == "filter") {
      EXPECT_EQ(cell.labels_bought, 0);
      EXPECT_EQ(cell.budget, 0.0);
    } else {
      // A label budget buys that many images; the quick panel reads each image twice. The mixed
      // plan buys half its images from each part.
      const int images = static_cast<int>(cell.budget);
      const int expected = cell.plan == "counts" ? 2 * images : cell.plan == "mix" ? images / 2 + 2 * (images / 2) : images;
      EXPECT_EQ(cell.labels_bought, expected);
      double seconds = 0.0;
      for (const store::LabelCostRow& row : cell.label_costs) seconds += row.seconds;
      EXPECT_NEAR(cell.hours_spent, seconds / 3600.0, 1e-9);
      EXPECT_EQ(cell.training_curve.size(), 2U);
    }
    // 6 test subjects: each scored quantity has 6 predictions on the test set and 6 on its rescan.
    int test_rows = 0, rescan_rows = 0;
    for (const store::SubjectPrediction& row : cell.predictions) {
      test_rows += row.test_set == "test" && row.quantity == "count";
      rescan_rows += row.test_set == "rescan" && row.quantity == "count";
    }
    EXPECT_EQ(test_rows, 6);
    EXPECT_EQ(rescan_rows, 6);
    const double mae = metric(cell, "test", "count", "mae");
    EXPECT_TRUE(std::isfinite(mae) && mae >= 0.0);
    // The recorded MAE is the mean absolute error of the stored per-subject rows.
    double absolute = 0.0;
    for (const store::SubjectPrediction& row : cell.predictions)
      if (row.test_set == "test" && row.quantity == "count") absolute += std::fabs(row.predicted - row.truth);
    EXPECT_NEAR(mae, absolute / 6.0, 1e-12);
    EXPECT_FALSE(std::isnan(metric(cell, "rescan", "count", "repeatability_coefficient")) &&
                 metric(cell, "rescan", "count", "repeatability_coefficient") < 0.0);
    // Pictures for the report: the held-out subject (image, truth, map), then the first label
    // bought; a count is named in the caption, an outline drawn (example_maps.h).
    std::vector<std::string> roles;
    for (const store::ExampleMap& map : cell.example_maps) {
      roles.push_back(map.role);
      EXPECT_EQ(map.pixels.size(), 32U * 32U) << map.role;
    }
    const std::vector<std::string> test_roles = {"test_image", "test_truth", "prediction"};
    std::vector<std::string> expected_roles = test_roles;
    if (cell.plan == "counts") expected_roles.push_back("label_image");
    if (cell.plan == "outlines" || cell.plan == "mix") {
      expected_roles.push_back("label_image");
      expected_roles.push_back("label");
    }
    EXPECT_EQ(roles, expected_roles);
    if (cell.plan == "counts") {
      EXPECT_EQ(cell.example_maps[3].caption.rfind("count label: ", 0), 0U);
    }
  }
}

TEST(StudyRunner, LargerBudgetsHoldTheLabelsOfSmallerOnes) {
  const fs::path folder = scratch("nested");
  const StudyOptions study = read_study_file(write_study(folder, tiny_study_text("hours", "[0.1, 0.2, 0.5]")).string());
  CohortCache cache;
  std::map<std::pair<std::string, int>, std::vector<std::set<std::pair<int, int>>>> bought;  // (plan, repeat) -> per budget
  for (const CellSpec& cell : expand_cells(study)) {
    // The mixed plan's outline share of 0.1 h buys no outline (a failed cell, tested elsewhere).
    if (!cell.plan.labelled || cell.plan.is_mixed()) continue;
    const CellResult result = run_cell(cell, &cache);
    std::set<std::pair<int, int>> labels;
    for (const store::LabelCostRow& row : result.label_costs) labels.insert({row.subject, row.rater});
    EXPECT_LE(result.hours_spent, cell.budget + 1e-12);
    bought[{cell.plan.name, cell.repeat}].push_back(labels);
  }
  for (const auto& [arm, purchases] : bought) {
    SCOPED_TRACE(arm.first + " repeat " + std::to_string(arm.second));
    ASSERT_EQ(purchases.size(), 3U);
    for (std::size_t i = 1; i < purchases.size(); ++i) {
      EXPECT_TRUE(std::includes(purchases[i].begin(), purchases[i].end(), purchases[i - 1].begin(),
                                purchases[i - 1].end()));
      EXPECT_GT(purchases[i].size(), purchases[i - 1].size());
    }
  }
  // The repeats draw different pools: no subject is bought in both.
  std::set<int> first, second;
  for (const auto& [subject, rater] : bought[{"counts", 0}].back()) first.insert(subject);
  for (const auto& [subject, rater] : bought[{"counts", 1}].back()) second.insert(subject);
  for (int subject : first) EXPECT_EQ(second.count(subject), 0U);
}

TEST(StudyRunner, ACellAloneEqualsTheSameCellInAStudyAndAfterAnother) {
  const fs::path folder = scratch("alone");
  const StudyOptions study = read_study_file(write_study(folder, tiny_study_text()).string());
  const std::vector<CellSpec> cells = expand_cells(study);
  RunOptions options;
  options.store_path = (folder / "results.db").string();
  run_study(study, options);
  const std::vector<store::CellRecord> stored = store::ResultsStore::open_existing(options.store_path).cells();
  const CellSpec& b = cells.back();  // the last cell, run after every other in the study
  const CellResult alone = run_cell(b);
  const auto in_study = std::find_if(stored.begin(), stored.end(), [&](const store::CellRecord& r) { return r.key == alone.key; });
  ASSERT_NE(in_study, stored.end());
  expect_same_cell(alone, *in_study);
  run_cell(cells.front());  // another cell first: torch's global state must not carry over
  expect_same_cell(run_cell(b), alone);
}

TEST(StudyRunner, TwoShardsMergedEqualOneFullRun) {
  const fs::path folder = scratch("shards");
  const StudyOptions study = read_study_file(write_study(folder, tiny_study_text()).string());
  RunOptions full;
  full.store_path = (folder / "full.db").string();
  run_study(study, full);
  std::vector<std::string> shards;
  for (int k = 1; k <= 2; ++k) {
    RunOptions shard;
    shard.store_path = (folder / ("shard" + std::to_string(k) + ".db")).string();
    shard.shard = {k, 2};
    const RunSummary summary = run_study(study, shard);
    EXPECT_EQ(summary.cells_shard, 7);
    shards.push_back(shard.store_path);
  }
  const std::string merged = (folder / "merged.db").string();
  store::merge_stores(shards, merged);
  expect_same_store(store::ResultsStore::open_existing(full.store_path).cells(),
                    store::ResultsStore::open_existing(merged).cells());
}

// Runs `frugal run` and kills it with SIGKILL after `delay`; returns true when it finished first.
bool run_until_killed(const std::string& study, const std::string& store, std::chrono::milliseconds delay) {
  const pid_t child = fork();
  if (child == 0) {
    const int null = ::open("/dev/null", O_WRONLY);
    dup2(null, STDOUT_FILENO);
    dup2(null, STDERR_FILENO);
    execl(FRUGAL_EXECUTABLE, FRUGAL_EXECUTABLE, "run", study.c_str(), "--out", store.c_str(), nullptr);
    _exit(127);
  }
  const auto deadline = std::chrono::steady_clock::now() + delay;
  int status = 0;
  while (std::chrono::steady_clock::now() < deadline) {
    if (waitpid(child, &status, WNOHANG) == child) return WIFEXITED(status) && WEXITSTATUS(status) == 0;
    std::this_thread::sleep_for(std::chrono::milliseconds(5));
  }
  kill(child, SIGKILL);
  waitpid(child, &status, 0);
  return false;
}

TEST(StudyRunner, KilledRunsResumeWithoutLosingOrDuplicatingCells) {
  const fs::path folder = scratch("resume");
  // Eight repeats (56 cells, a few seconds) so that random kills land inside the run.
  const fs::path study_file = write_study(folder, tiny_study_text("labels", "[4, 8]", 8));
  const StudyOptions study = read_study_file(study_file.string());
  RunOptions reference;
  reference.store_path = (folder / "reference.db").string();
  run_study(study, reference);
  const std::vector<store::CellRecord> expected = store::ResultsStore::open_existing(reference.store_path).cells();

  const unsigned seed = 20261202;
  std::mt19937 random(seed);  // delays only; the numbers under test do not depend on them
  SCOPED_TRACE("kill delays drawn with seed " + std::to_string(seed));
  const std::string store_path = (folder / "killed.db").string();
  std::size_t previous = 0;
  int kills = 0;
  bool finished = false;
  for (int attempt = 0; attempt < 40 && !finished; ++attempt) {
    const auto delay = std::chrono::milliseconds(std::uniform_int_distribution<int>(400, 1400)(random));
    finished = run_until_killed(study_file.string(), store_path, delay);
    kills += finished ? 0 : 1;
    if (!fs::exists(store_path)) continue;
    // After every kill the store opens, and holds at least what it held before.
    const std::size_t now = store::ResultsStore::open_existing(store_path).finished_keys().size();
    EXPECT_GE(now, previous);
    previous = now;
  }
  ASSERT_TRUE(finished) << "the run never finished";
  EXPECT_GE(kills, 2) << "the delays never interrupted a run; the test checked nothing";
  expect_same_store(expected, store::ResultsStore::open_existing(store_path).cells());
}

TEST(StudyRunner, AFailingCellIsRecordedAndTheRunGoesOn) {
  const fs::path folder = scratch("failing");
  // At 0.1 h the mixed plan's half share (180 s) buys no careful outline (about 200 s each).
  StudyOptions study = read_study_file(write_study(folder, tiny_study_text("hours", "[0.1, 0.5]")).string());
  RunOptions options;
  options.store_path = (folder / "results.db").string();
  const RunSummary summary = run_study(study, options);
  EXPECT_GE(summary.failed, 1);
  EXPECT_EQ(summary.done + summary.failed, summary.cells_study);
  EXPECT_EQ(summary.failures.size(), static_cast<std::size_t>(summary.failed));
  int failed = 0;
  for (const store::CellRecord& cell : store::ResultsStore::open_existing(options.store_path).cells())
    if (cell.status == "failed") {
      ++failed;
      EXPECT_EQ(cell.plan, "mix");
      EXPECT_NE(cell.error.find("outline"), std::string::npos) << cell.error;
    }
  EXPECT_EQ(failed, summary.failed);
  // Run again: the finished cells are skipped and only the failed ones are tried again.
  const RunSummary again = run_study(study, options);
  EXPECT_EQ(again.skipped, summary.done);
  EXPECT_EQ(again.failed, summary.failed);
}

// training_images / labels above train.epochs is clamped (cell_runner); the run names every cell
// the clamp shortened, and only those. With 16 images and train.epochs 2: outlines at 4 images
// (4 labels) ask 4 epochs and mix at 4 images (2 outlines + 2 images x 2 counts = 6 labels) asks
// round(16 / 6) = 3; counts at 4 images (8 labels, two raters each) ask 2, and 8 images ask at
// most 2 in every plan.
TEST(StudyRunner, CellsWhoseEpochsAreCappedAreNamed) {
  const fs::path folder = scratch("epoch_capped");
  StudyOptions study = read_study_file(write_study(folder, tiny_study_text()).string());
  study.training_images = 16;
  RunOptions options;
  options.store_path = (folder / "capped.db").string();
  const RunSummary capped = run_study(study, options);
  ASSERT_EQ(capped.failed, 0);
  EXPECT_EQ(capped.epoch_capped, (std::vector<std::string>{
                                     "outlines / mask / 4 labels / repeat 1: 2 epochs of the 4 asked",
                                     "mix / mixed / 4 labels / repeat 1: 2 epochs of the 3 asked",
                                     "outlines / mask / 4 labels / repeat 2: 2 epochs of the 4 asked",
                                     "mix / mixed / 4 labels / repeat 2: 2 epochs of the 3 asked"}));
  // And the cells did train the capped number of epochs.
  for (const store::CellRecord& cell : store::ResultsStore::open_existing(options.store_path).cells())
    if (cell.strategy != "line-filter") {
      SCOPED_TRACE(cell.plan + " " + std::to_string(cell.budget));
      EXPECT_EQ(static_cast<int>(cell.training_curve.size()),
                std::clamp(static_cast<int>(std::lround(16.0 / cell.labels_bought)), 1, 2));
    }

  study.training_images = 8;  // at most 2 epochs asked of any cell: the cap never binds
  options.store_path = (folder / "uncapped.db").string();
  EXPECT_TRUE(run_study(study, options).epoch_capped.empty());
}

// Every example study in the repository reads and runs end to end at a tiny size, so the
// examples cannot rot.
TEST(StudyRunner, EveryExampleStudyRunsAtATinySize) {
  int studies = 0;
  for (const auto& entry : fs::directory_iterator(fs::path(FRUGAL_SOURCE_DIR) / "studies")) {
    if (entry.path().extension() != ".yaml") continue;
    SCOPED_TRACE(entry.path().string());
    StudyOptions study = read_study_file(entry.path().string());
    study.cohort.pool = std::min(study.cohort.pool, 40);
    study.cohort.test = 5;
    study.repeats = 1;
    study.budgets = {study.budgets.back()};  // the largest: every plan buys at least two images
    study.train.epochs = 1;
    study.train.width = 4;
    study.training_images = 0;
    study.threads = 1;
    if (study.scenario.geometry.dims == 2) study.scenario.geometry.size_2d = {32, 32};
    RunOptions options;
    options.store_path = (scratch("example_" + entry.path().stem().string()) / "results.db").string();
    const RunSummary summary = run_study(study, options);
    EXPECT_EQ(summary.failed, 0) << (summary.failures.empty() ? "" : summary.failures.front());
    EXPECT_EQ(summary.done, summary.cells_study);
    ++studies;
  }
  EXPECT_GE(studies, 2);
}

}  // namespace
}  // namespace frugal::study
