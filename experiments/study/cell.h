#pragma once
// A cell: one (label plan, strategy, budget, repeat) of a study, with everything it needs resolved
// into it, so that it runs alone, in any order, in any process, and always gives the same numbers
// (for the same thread count). Its key is the SHA-256 of its canonical JSON without the thread
// count; the study's hash is the same over the resolved study.

#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "experiments/study/study.h"

namespace frugal::study {

struct CellSpec {
  std::string study;  // the study's name
  ScenarioOptions scenario;
  std::uint64_t seed = 1;
  CohortOptions cohort;
  LabelPlan plan;    // the plan trained on; for a mixed plan, its name and share
  LabelPlan strong;  // mixed plans only: the resolved strong and weak plans
  LabelPlan weak;
  learn::TrainOptions train;  // train.strategy is this cell's strategy
  int training_images = 0;
  double budget = 0.0;  // in budget_unit; 0 for classical strategies
  BudgetUnit budget_unit = BudgetUnit::hours;
  int repeat = 0;
  std::vector<std::string> quantities;
  int threads = 2;
};

// Every field; `with_threads` false gives the identity the key hashes.
nlohmann::json to_json(const CellSpec& cell, bool with_threads = true);
nlohmann::json to_json(const LabelPlan& plan);
// Reads what to_json(cell) wrote (a store's spec_json) back into the same cell: the same JSON and
// the same key, so a stored cell can be run again on its own. Throws UserError naming what is wrong.
CellSpec cell_from_json(const nlohmann::json& tree);
// The resolved study, threads excepted (they change no cell's identity).
nlohmann::json to_json(const StudyOptions& study);

std::string sha256_hex(const std::string& text);
std::string cell_key(const CellSpec& cell);
std::string study_hash(const StudyOptions& study);

// Cells in a fixed order: repeat, then plan (study order), strategy (plan order), budget
// (ascending). Classical strategies get one cell per repeat at budget 0.
std::vector<CellSpec> expand_cells(const StudyOptions& study);

}  // namespace frugal::study
