#pragma once
// The eight phenomena `frugal validate` checks, each a small canonical study measured on one
// repeat's held-out subjects. docs/validate.md states each claim, its basis and its threshold.

#include <functional>
#include <string>
#include <utility>
#include <vector>

#include "experiments/validate/canonical_cells.h"

namespace frugal::validation {

// One claim of a phenomenon (a phenomenon may make two: "beats at small n", "the gap narrows").
struct CheckDefinition {
  std::string id;
  std::string claim;
  std::string effect;
  std::string basis;
  double threshold = 0.0;
};

// One repeat's measurement: an effect per check, and the numbers behind them.
struct RepeatOutcome {
  std::vector<double> effects;
  std::vector<std::pair<std::string, double>> parts;
};

struct Phenomenon {
  int number = 0;
  std::string title;
  std::vector<CheckDefinition> checks;
  std::function<RepeatOutcome(const CellContext&, int repeat)> measure;
};

// All eight, in order.
std::vector<Phenomenon> canonical_phenomena();

}  // namespace frugal::validation
