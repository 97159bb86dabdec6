#pragma once
// Writes the labels a rater panel gives for a phantom set: labels.csv (one row per label, with its
// annotator cost), clicks.csv for points, NIfTI masks for partial masks and outlines, and a
// manifest. Subjects are regenerated from (scenario, seed), so the labels belong to the phantom
// set `frugal phantoms` writes with the same scenario and seed.

#include <cstdint>
#include <functional>
#include <string>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/scenario.h"

namespace frugal {

struct LabelSetOptions {
  std::string out_dir;
  LabelKind kind = LabelKind::count;
  CountScope scope = CountScope::image;
  int count = 10;
  int first = 0;
  std::uint64_t seed = 1;
  int threads = 1;
  bool overwrite = false;
  std::string validate() const;
};

struct LabelSetSummary {
  int labels = 0;
  double annotator_seconds = 0.0;
  double seconds = 0.0;
};

LabelSetSummary write_label_set(const ScenarioOptions& scenario, const std::string& scenario_file,
                                const RaterOptions& rater, const std::string& rater_file, const LabelSetOptions& options,
                                const std::function<void(long long)>& progress = {});

// CSV rows for one label (labels.csv and, for points, clicks.csv); `mask_file` is "NA" when none.
std::string labels_csv_header();
std::string labels_csv_row(const Label& label, const std::string& mask_file);
std::string clicks_csv_header();
std::string clicks_csv_rows(const Label& label);

}  // namespace frugal
