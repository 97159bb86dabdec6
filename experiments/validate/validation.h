#pragma once
// The testbed's self-check: small canonical studies whose outcome published work (or common
// practice) settles, run through the same cells a study runs, each effect measured on held-out
// subjects against the exact truth, repeated on fresh subjects, and held to a stated threshold.
// A testbed that fails one of these would tell a study team the wrong thing about that method.
//
//   ValidationOptions options;  options.size = ValidationSize::quick;
//   ValidationReport report = run_validation(options, progress);
//   report.passed();  // every check

#include <cstdint>
#include <functional>
#include <string>
#include <vector>

namespace frugal::validation {

// quick: 48² images, 5 repeats, small cohorts (minutes; the test suite runs it). full: 64²
// images, 8 repeats, the cohorts docs/validate.md states.
enum class ValidationSize { quick, full };
std::string to_string(ValidationSize size);
ValidationSize validation_size_from_string(const std::string& name);  // throws UserError listing the names

struct ValidationOptions {
  ValidationSize size = ValidationSize::quick;
  std::uint64_t seed = 1;
  int threads = 2;                  // torch threads per cell; never changes a check's definition
  double confidence = 0.90;         // of the intervals over repeats
  std::vector<int> phenomena;       // numbers to run (1..8; key "phenomenon"); empty = all
  std::string store_path;           // results store that keeps every finished cell (resumable); empty = none
  std::string validate() const;     // empty, or "<key> = <value>: <what is allowed>"
};

// One claim, with the effect that measures it: it passes when the effect's mean over repeats
// reaches the threshold and its interval lies wholly above zero (the sign is settled).
struct CheckResult {
  int phenomenon = 0;  // 1..8; a phenomenon may make two checks, which share `parts`
  std::string id;      // "1", "3a", ...
  std::string claim;   // what the testbed must reproduce
  std::string effect;  // how it is measured, with its unit
  std::string basis;   // the published basis, or "common practice, no source"
  double threshold = 0.0;
  std::vector<double> effects;  // one per repeat
  double mean = 0.0;
  double lower = 0.0;  // Student-t interval over repeats at ValidationOptions::confidence
  double upper = 0.0;
  bool passed = false;
  // The numbers behind the effect, averaged over repeats ("model Dice 0.71", "labels' Dice 0.64").
  std::vector<std::pair<std::string, double>> parts;
};

struct ValidationReport {
  ValidationOptions options;
  int repeats = 0;
  std::vector<CheckResult> checks;
  double seconds = 0.0;
  int cells_resumed = 0;  // finished cells read back from options.store_path instead of trained
  bool passed() const;
};

// Where the run is: the phenomenon, its repeat, and the cell's stage.
struct ValidationProgress {
  int phenomenon = 0;
  int repeat = 0;
  int repeats = 0;
  std::string what;
};

// Throws UserError for invalid options; a cell that fails (training diverged) fails the run with
// the cell's message, since a check that cannot be measured must not read as passed.
ValidationReport run_validation(const ValidationOptions& options,
                                const std::function<void(const ValidationProgress&)>& progress = {});

}  // namespace frugal::validation
