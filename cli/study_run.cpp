#include "cli/study_run.h"

#include <unistd.h>

#include <cmath>
#include <cstdio>

namespace frugal::cli {
namespace {

std::string duration(double seconds) {
  if (seconds < 0.0) return "?";
  char buffer[32];
  const long total = std::lround(seconds);
  if (total >= 3600)
    std::snprintf(buffer, sizeof buffer, "%ldh%02ldm", total / 3600, (total % 3600) / 60);
  else
    std::snprintf(buffer, sizeof buffer, "%ldm%02lds", total / 60, total % 60);
  return buffer;
}

}  // namespace

study::RunSummary run_study_with_display(const study::StudyOptions& options, const std::string& store_path,
                                         const study::Shard& shard) {
  const bool terminal = isatty(STDERR_FILENO) != 0;
  std::size_t last_width = 0;
  study::RunOptions run;
  run.store_path = store_path;
  run.shard = shard;
  const std::string prefix = shard.count > 1 ? "[shard " + std::to_string(shard.index) + "/" + std::to_string(shard.count) + "] " : "";
  if (terminal)
    run.progress = [&](const study::RunProgress& p) {
      std::string stage = p.stage.stage;
      if (stage == "train" && p.stage.epochs > 0)
        stage += " epoch " + std::to_string(p.stage.epoch) + "/" + std::to_string(p.stage.epochs);
      std::string line = prefix + "cells " + std::to_string(p.cells_done) + "/" + std::to_string(p.cells_total) + "  " +
                         p.cell + ": " + stage + "  elapsed " + duration(p.elapsed_seconds) + ", ETA " +
                         duration(p.eta_seconds);
      const std::size_t width = line.size();
      if (width < last_width) line.append(last_width - width, ' ');
      last_width = width;
      std::fprintf(stderr, "\r%s", line.c_str());
      std::fflush(stderr);
    };
  run.cell_finished = [&](const study::RunProgress& p, const study::CellResult& cell) {
    if (terminal) std::fputc('\r', stderr);
    std::string line = prefix + "cell " + std::to_string(p.cells_done) + "/" + std::to_string(p.cells_total) + " " +
                       p.cell + ": " + cell.status;
    char detail[160];
    std::snprintf(detail, sizeof detail, ", %d labels, %.2f annotator-hours, %.1f s", cell.labels_bought,
                  cell.hours_spent,
                  cell.seconds_generate + cell.seconds_label + cell.seconds_train + cell.seconds_predict +
                      cell.seconds_score);
    line += cell.status == "done" ? std::string(detail) : ": " + cell.error;
    if (line.size() < last_width) line.append(last_width - line.size(), ' ');
    last_width = 0;
    std::fprintf(stderr, "%s\n", line.c_str());
  };
  const study::RunSummary summary = study::run_study(options, run);
  if (terminal && last_width > 0) std::fputc('\n', stderr);
  std::printf("%s%s: %d cells in this shard of %d; %d run, %d already in %s, %d failed; %.1f s\n", prefix.c_str(),
              options.name.c_str(), summary.cells_shard, summary.cells_study, summary.done + summary.failed,
              summary.skipped, store_path.c_str(), summary.failed, summary.seconds);
  for (const std::string& failure : summary.failures) std::printf("  failed: %s\n", failure.c_str());
  if (!summary.epoch_capped.empty()) {
    // A short training is easily mistaken for a poor plan: say so, with the first such cell.
    std::printf("  note: train.epochs (%d) capped training_images (%d) in %zu cell%s, which trained on fewer images "
                "than asked (first: %s); raise train.epochs to lift the cap\n",
                options.train.epochs, options.training_images, summary.epoch_capped.size(),
                summary.epoch_capped.size() == 1 ? "" : "s", summary.epoch_capped.front().c_str());
  }
  std::fflush(stdout);  // before any error message on stderr
  return summary;
}

}  // namespace frugal::cli
