#pragma once
// Runs a study with the command line's display: a live line on a terminal (cells done / total,
// the current cell and its epoch, elapsed, ETA), plain log lines otherwise. Shared by run and demo.

#include <string>

#include "experiments/study/study_runner.h"

namespace frugal::cli {

study::RunSummary run_study_with_display(const study::StudyOptions& options, const std::string& store_path,
                                         const study::Shard& shard);

}  // namespace frugal::cli
