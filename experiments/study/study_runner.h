#pragma once
// Runs a study's cells into a results store: cells already finished in the store are skipped
// (resume), each finished cell is written in one transaction, a failing cell records its error
// and the run goes on. A shard K/N runs every N-th cell (expansion order) starting at the K-th,
// so N processes, one per shard, run the whole study and `merge_stores` joins them exactly.
// Parallelism is by processes, not threads: torch's state is process-global.

#include <functional>
#include <string>
#include <vector>

#include "experiments/study/cell.h"
#include "experiments/study/cell_runner.h"

namespace frugal::study {

struct Shard {
  int index = 1;  // 1-based
  int count = 1;
  std::string validate() const;  // empty, or "--shard K/N: ..." with what is allowed
};
// Parses "K/N" (1 <= K <= N). Throws UserError naming the text and what is allowed.
Shard shard_from_string(const std::string& text);

struct RunProgress {
  int cells_total = 0;  // in this shard
  int cells_done = 0;   // finished or failed in this run, plus those skipped
  int cells_failed = 0;
  int cells_skipped = 0;  // already in the store
  std::string cell;       // the current cell, e.g. "quick-counts / count-map / 10 h / repeat 2"
  CellProgress stage;
  double elapsed_seconds = 0.0;
  double eta_seconds = -1.0;  // -1 until a cell has finished in this run
};

struct RunOptions {
  std::string store_path;
  Shard shard;
  std::function<void(const RunProgress&)> progress;            // often; for a display
  std::function<void(const RunProgress&, const CellResult&)> cell_finished;  // after each cell
};

struct RunSummary {
  int cells_study = 0;  // all shards
  int cells_shard = 0;
  int skipped = 0;
  int done = 0;
  int failed = 0;
  std::vector<std::string> failures;  // "cell: message"
  // Cells run this time whose training_images / labels exceeded train.epochs, so they trained
  // fewer images than the study asks for: "cell: N epochs of the M asked".
  std::vector<std::string> epoch_capped;
  double seconds = 0.0;
};

// The cells of one shard, in run order.
std::vector<CellSpec> shard_cells(const std::vector<CellSpec>& cells, const Shard& shard);
// "plan / strategy / budget unit / repeat r"
std::string describe(const CellSpec& cell);

// Throws UserError when the store cannot be opened for this study.
RunSummary run_study(const StudyOptions& study, const RunOptions& options);

}  // namespace frugal::study
