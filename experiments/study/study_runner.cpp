#include "experiments/study/study_runner.h"

#include <chrono>
#include <cstdio>
#include <set>

#include "frugal_version.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::study {

std::string Shard::validate() const {
  if (count < 1 || count > 10000) return "--shard " + std::to_string(index) + "/" + std::to_string(count) + ": N allowed 1 to 10000";
  if (index < 1 || index > count)
    return "--shard " + std::to_string(index) + "/" + std::to_string(count) + ": K allowed 1 to N";
  return "";
}

Shard shard_from_string(const std::string& text) {
  const std::size_t slash = text.find('/');
  const auto whole = [](const std::string& part) {
    return !part.empty() && part.size() <= 5 && part.find_first_not_of("0123456789") == std::string::npos;
  };
  if (slash == std::string::npos || !whole(text.substr(0, slash)) || !whole(text.substr(slash + 1)))
    throw UserError("--shard " + text + ": allowed K/N with whole numbers 1 <= K <= N, e.g. 2/4");
  Shard shard{std::stoi(text.substr(0, slash)), std::stoi(text.substr(slash + 1))};
  if (const std::string error = shard.validate(); !error.empty()) throw UserError(error);
  return shard;
}

std::vector<CellSpec> shard_cells(const std::vector<CellSpec>& cells, const Shard& shard) {
  std::vector<CellSpec> mine;
  for (std::size_t i = 0; i < cells.size(); ++i)
    if (static_cast<int>(i % static_cast<std::size_t>(shard.count)) == shard.index - 1) mine.push_back(cells[i]);
  return mine;
}

std::string describe(const CellSpec& cell) {
  const std::string unit = cell.budget_unit == BudgetUnit::hours ? " h" : " labels";
  return cell.plan.name + " / " + learn::to_string(cell.train.strategy) + " / " + format_number(cell.budget) + unit +
         " / repeat " + std::to_string(cell.repeat + 1);
}

RunSummary run_study(const StudyOptions& study, const RunOptions& options) {
  using Clock = std::chrono::steady_clock;
  const auto start = Clock::now();
  if (const std::string error = options.shard.validate(); !error.empty()) throw UserError(error);
  const std::vector<CellSpec> cells = expand_cells(study);
  store::StudyRecord record;
  record.name = study.name;
  record.study_hash = study_hash(study);
  record.resolved_yaml = to_json(study).dump(2) + "\n";  // JSON is YAML: the file reads back as either
  record.tool_version = kVersion;
  record.cells_total = static_cast<int>(cells.size());
  store::ResultsStore results = store::ResultsStore::open_for_study(options.store_path, record);

  const std::vector<CellSpec> mine = shard_cells(cells, options.shard);
  const std::set<std::string> finished = results.finished_keys();
  RunSummary summary;
  summary.cells_study = static_cast<int>(cells.size());
  summary.cells_shard = static_cast<int>(mine.size());
  RunProgress progress;
  progress.cells_total = summary.cells_shard;
  double run_seconds = 0.0;
  int run_cells = 0;
  CohortCache cache;
  int cached_repeat = -1;
  const auto elapsed = [&] { return std::chrono::duration<double>(Clock::now() - start).count(); };
  for (const CellSpec& cell : mine) {
    if (finished.count(cell_key(cell)) != 0) {
      ++summary.skipped;
      ++progress.cells_skipped;
      ++progress.cells_done;
      continue;
    }
    // Cells run repeat by repeat: keep one repeat's subjects and labels at a time.
    if (cell.repeat != cached_repeat) {
      cache.clear();
      cached_repeat = cell.repeat;
    }
    progress.cell = describe(cell);
    const auto cell_start = Clock::now();
    CellResult result;
    try {
      result = run_cell(cell, &cache, [&](const CellProgress& stage) {
        progress.stage = stage;
        progress.elapsed_seconds = elapsed();
        if (options.progress) options.progress(progress);
      });
    } catch (const UserError& error) {
      // What the study can cause (a diverging run, say) is recorded; the run goes on.
      result = cell_record(cell, "failed");
      result.error = error.what();
    }
    results.write_cell(result);
    if (result.status == "failed") {
      ++summary.failed;
      ++progress.cells_failed;
      summary.failures.push_back(describe(cell) + ": " + result.error);
    } else {
      ++summary.done;
      // The cell trained one label row per label bought (cell_runner), so this is its own rule.
      if (const int asked = epochs_asked(cell, result.labels_bought); asked > cell.train.epochs)
        summary.epoch_capped.push_back(describe(cell) + ": " + std::to_string(cell.train.epochs) + " epochs of the " +
                                       std::to_string(asked) + " asked");
    }
    ++progress.cells_done;
    run_seconds += std::chrono::duration<double>(Clock::now() - cell_start).count();
    ++run_cells;
    progress.elapsed_seconds = elapsed();
    progress.eta_seconds = run_seconds / run_cells * (progress.cells_total - progress.cells_done);
    if (options.cell_finished) options.cell_finished(progress, result);
  }
  summary.seconds = elapsed();
  return summary;
}

}  // namespace frugal::study
