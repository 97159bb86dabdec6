#pragma once
// Calibration: find the rater-model noise that reproduces an agreement a team measured in its own
// pilot — quadratic-weighted kappa between two raters' grades, ICC(2,1) between two raters'
// counts, or mean Dice between two raters' outlines. The agreement of two simulated raters is a
// deterministic, monotone function of one noise parameter once the subjects and the raters'
// random streams are fixed (common random numbers), so bisection finds the root.

#include <cstdint>
#include <string>

#include "corruptors/rater.h"
#include "phantoms/scenario.h"

namespace frugal {

enum class CalibrationStatistic { grade_kappa, count_icc, outline_dice };
std::string to_string(CalibrationStatistic statistic);
CalibrationStatistic calibration_statistic_from_string(const std::string& name);  // kappa, icc, dice

struct CalibrationOptions {
  CalibrationStatistic statistic = CalibrationStatistic::grade_kappa;
  double target = 0.6;       // the agreement measured in the pilot
  int subjects = 200;        // simulated pilot size; more narrows the interval
  std::uint64_t seed = 1;
  double tolerance = 0.002;  // stop when the achieved agreement is this close to the target
  std::string validate() const;
};

struct CalibrationResult {
  std::string parameter;        // rater key path that was tuned, e.g. "grading.perception_sd"
  double value = 0.0;           // its calibrated value
  double achieved = 0.0;        // agreement of two simulated raters at that value
  double lower = 0.0, upper = 0.0;  // 95% interval of the achieved agreement
  double least_noise_agreement = 0.0, most_noise_agreement = 0.0;  // ends of the search range
  int evaluations = 0;
  RaterOptions rater;           // the input rater with the calibrated value
};

// Agreement between panel members 0 and 1 (the panel is widened to 2 raters if needed).
struct Agreement {
  double value = 0.0, lower = 0.0, upper = 0.0;
};
Agreement simulated_agreement(const ScenarioOptions& scenario, const RaterOptions& rater,
                              CalibrationStatistic statistic, int subjects, std::uint64_t seed);

// Throws UserError when the target lies outside what the parameter's range can reach.
CalibrationResult calibrate(const ScenarioOptions& scenario, const RaterOptions& rater, const CalibrationOptions& options);

}  // namespace frugal
