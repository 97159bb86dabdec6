#pragma once
// The pieces the canonical studies are built from: their sizes, scenarios and raters, a cell of
// one (plan, strategy, labels, repeat) run through study::run_cell, and the labels' own quality on
// the held-out subjects (what a model must beat, or inherits).

#include <cstdint>
#include <functional>
#include <string>

#include "corruptors/rater.h"
#include "experiments/scoring/scoring.h"
#include "experiments/study/cell.h"
#include "experiments/study/cell_runner.h"
#include "experiments/validate/cell_archive.h"
#include "experiments/validate/validation.h"
#include "phantoms/scenario.h"

namespace frugal::validation {

// What one size runs: images, repeats and cohorts.
struct ValidationSizes {
  int side = 48;             // 2D images of side x side voxels
  int repeats = 5;
  int pool = 300;            // training subjects per repeat (labels are bought from them)
  int test = 48;             // held-out subjects per repeat
  int small_labels = 24;     // "small n": labelled images
  int large_labels = 160;    // "large n"
  int training_images = 2000;  // images through the optimiser per cell (cell.h: epochs from it)
  int pattern_train = 160;   // voids subjects the pattern classifier is fitted on
  int pattern_test = 160;    // and tested on
};
ValidationSizes sizes_for(ValidationSize size);

// The 2D scenarios: a brain-like field with lesions placed around the ventricles and tube-shaped
// look-alike vessels; a lung-like field in HU. The phenomena's raters start from corruptors'
// careful_rater() and add one flaw each.
ScenarioOptions streaks_scenario(int side);
ScenarioOptions voids_scenario(int side);

// Everything a phenomenon's cells share within one run.
struct CellContext {
  ValidationSizes sizes;
  std::uint64_t seed = 1;
  int threads = 2;
  study::CohortCache* cache = nullptr;
  CellArchive* archive = nullptr;  // finished cells: a cell already there is not trained again
  std::function<void(const std::string&)> progress;  // the cell's stage, for the display
};

// A plan of one label kind from one rater.
study::LabelPlan label_plan(const std::string& name, LabelKind kind, const RaterOptions& rater);

// A cell buying `labels` images' labels (budget unit: labels) from the repeat's pool.
study::CellSpec make_cell(const CellContext& context, const ScenarioOptions& scenario, const study::LabelPlan& plan,
                          learn::Strategy strategy, int labels, int repeat);
// Runs it, or returns the archive's copy; a failed cell throws (a check that cannot be measured
// must not pass).
study::CellResult run(const CellContext& context, const study::CellSpec& spec);

// One metric of a finished cell; NaN when the cell did not record it.
double metric(const study::CellResult& cell, const std::string& test_set, const std::string& quantity,
              const std::string& name);

// The plan's rater asked for the same label kind on the cell's held-out test subjects: how its
// masks overlap and find the true lesions (the same matching score uses), and the labels' mean
// marked volume against the truth's lesion-labelled volume (voxels, not the analytic volume).
struct LabelQuality {
  scoring::MapScore maps;
  double mean_label_volume_mm3 = 0.0;
  double mean_truth_volume_mm3 = 0.0;
};
LabelQuality test_label_quality(const CellContext& context, const study::CellSpec& spec);

}  // namespace frugal::validation
