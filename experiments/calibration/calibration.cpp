#include "experiments/calibration/calibration.h"

#include <Eigen/Core>

#include <algorithm>
#include <cmath>
#include <functional>
#include <map>
#include <vector>

#include "corruptors/labeler.h"
#include "experiments/measure/icc.h"
#include "experiments/measure/kappa.h"
#include "experiments/measure/overlap.h"
#include "phantoms/phantom.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace {

const std::map<std::string, CalibrationStatistic> kStatistics{{"kappa", CalibrationStatistic::grade_kappa},
                                                              {"icc", CalibrationStatistic::count_icc},
                                                              {"dice", CalibrationStatistic::outline_dice}};

// The noise parameter each statistic tunes, its search range (least to most noise) and access.
struct Knob {
  const char* name;
  double least_noise, most_noise;
  std::function<double&(RaterOptions&)> field;
};

Knob knob_for(CalibrationStatistic statistic) {
  switch (statistic) {
    case CalibrationStatistic::grade_kappa:
      return {"grading.perception_sd", 0.0, 4.0, [](RaterOptions& r) -> double& { return r.grading.perception_sd; }};
    case CalibrationStatistic::count_icc:
      // Raising the length seen half the time makes each rater miss more lesions independently.
      return {"detection.size50_mm", 0.05, 60.0, [](RaterOptions& r) -> double& { return r.detection.size50_mm; }};
    case CalibrationStatistic::outline_dice:
      return {"outline.displacement_sd_mm", 0.0, 6.0,
              [](RaterOptions& r) -> double& { return r.outline.displacement_sd_mm; }};
  }
  FRUGAL_CHECK(false);
}

LabelKind kind_for(CalibrationStatistic statistic) {
  switch (statistic) {
    case CalibrationStatistic::grade_kappa: return LabelKind::grade;
    case CalibrationStatistic::count_icc: return LabelKind::count;
    case CalibrationStatistic::outline_dice: return LabelKind::outline;
  }
  return LabelKind::count;
}

Agreement agreement_of(const std::vector<Subject>& subjects, const RaterOptions& rater, CalibrationStatistic statistic,
                       std::uint64_t seed) {
  const LabelKind kind = kind_for(statistic);
  std::vector<double> first, second;
  std::vector<double> dices;
  for (const Subject& subject : subjects) {
    LabelRequest request;
    request.kind = kind;
    request.rater = 0;
    const Label a = make_label(subject, rater, request, seed);
    request.rater = 1;
    const Label b = make_label(subject, rater, request, seed);
    if (statistic == CalibrationStatistic::outline_dice) {
      // Two empty outlines agree trivially (Dice 1) whatever the noise; they carry no information.
      const bool both_empty = std::none_of(a.mask.voxels().begin(), a.mask.voxels().end(), [](auto v) { return v != 0; }) &&
                              std::none_of(b.mask.voxels().begin(), b.mask.voxels().end(), [](auto v) { return v != 0; });
      if (!both_empty) dices.push_back(measure::overlap(a.mask, b.mask).dice);
    } else {
      first.push_back(a.value);
      second.push_back(b.value);
    }
  }
  Agreement agreement;
  if (statistic == CalibrationStatistic::grade_kappa) {
    std::vector<double> categories;
    for (int bin = 0; bin < rater.grading.bins(); ++bin) categories.push_back(bin);
    measure::CohenKappaOptions options;
    options.weights = measure::KappaWeights::quadratic;
    const auto kappa = measure::cohen_kappa(first, second, categories, options);
    agreement = {kappa.kappa, kappa.lower, kappa.upper};
  } else if (statistic == CalibrationStatistic::count_icc) {
    Eigen::MatrixXd ratings(static_cast<Eigen::Index>(first.size()), 2);
    for (std::size_t n = 0; n < first.size(); ++n) {
      ratings(static_cast<Eigen::Index>(n), 0) = first[n];
      ratings(static_cast<Eigen::Index>(n), 1) = second[n];
    }
    const auto icc = measure::intraclass_correlation(ratings).get(measure::IccForm::two_way_random_single);
    agreement = {icc.value, icc.lower, icc.upper};
  } else {
    double sum = 0.0, sum2 = 0.0;
    for (double d : dices) {
      sum += d;
      sum2 += d * d;
    }
    if (dices.size() < 10)
      throw UserError("only " + std::to_string(dices.size()) +
                      " simulated subjects have an outline from either rater; raise --subjects or use a scenario with more lesions");
    const double n = static_cast<double>(dices.size());
    const double mean = sum / n;
    const double se = std::sqrt(std::max(0.0, (sum2 / n - mean * mean) * n / (n - 1.0)) / n);
    agreement = {mean, mean - 1.96 * se, mean + 1.96 * se};  // normal interval of a mean (n >= 30)
  }
  return agreement;
}

std::vector<Subject> pilot_subjects(const ScenarioOptions& scenario, int count, std::uint64_t seed) {
  std::vector<Subject> subjects;
  subjects.reserve(static_cast<std::size_t>(count));
  for (int n = 0; n < count; ++n) subjects.push_back(generate_subject(scenario, seed, n));
  return subjects;
}

RaterOptions two_raters(RaterOptions rater) {
  rater.panel.raters = std::max(rater.panel.raters, 2);
  return rater;
}

}  // namespace

std::string to_string(CalibrationStatistic statistic) {
  for (const auto& [name, value] : kStatistics)
    if (value == statistic) return name;
  return "?";
}

CalibrationStatistic calibration_statistic_from_string(const std::string& name) {
  const auto found = kStatistics.find(name);
  if (found == kStatistics.end()) throw UserError("--statistic '" + name + "' is unknown; allowed: dice, icc, kappa");
  return found->second;
}

std::string CalibrationOptions::validate() const {
  if (!(target > -1.0 && target < 1.0)) return "--target is " + format_number(target) + "; allowed -1 < target < 1";
  if (statistic == CalibrationStatistic::outline_dice && !(target > 0.0))
    return "--target is " + format_number(target) + "; a Dice target lies in (0, 1)";
  if (subjects < 30 || subjects > 5000) return "--subjects is " + std::to_string(subjects) + "; allowed 30..5000";
  if (!(tolerance > 0.0 && tolerance < 0.1)) return "tolerance must lie in (0, 0.1)";
  return {};
}

Agreement simulated_agreement(const ScenarioOptions& scenario, const RaterOptions& rater,
                              CalibrationStatistic statistic, int subjects, std::uint64_t seed) {
  return agreement_of(pilot_subjects(scenario, subjects, seed), two_raters(rater), statistic, seed);
}

CalibrationResult calibrate(const ScenarioOptions& scenario, const RaterOptions& rater, const CalibrationOptions& options) {
  if (std::string error = options.validate(); !error.empty()) throw UserError(error);
  if (std::string error = rater.validate(); !error.empty()) throw UserError(error);
  if (options.statistic == CalibrationStatistic::count_icc && scenario.family != Family::streaks)
    throw UserError("--statistic icc calibrates lesion counts, which need a streaks scenario");
  const std::vector<Subject> subjects = pilot_subjects(scenario, options.subjects, options.seed);
  const Knob knob = knob_for(options.statistic);
  RaterOptions trial = two_raters(rater);

  CalibrationResult result;
  result.parameter = knob.name;
  const auto agreement_at = [&](double value) {
    knob.field(trial) = value;
    ++result.evaluations;
    return agreement_of(subjects, trial, options.statistic, options.seed);
  };
  double least = knob.least_noise, most = knob.most_noise;
  const Agreement at_least = agreement_at(least), at_most = agreement_at(most);
  result.least_noise_agreement = at_least.value;
  result.most_noise_agreement = at_most.value;
  if (!(options.target <= at_least.value && options.target >= at_most.value))
    throw UserError("--target " + format_number(options.target) + " is outside what " + knob.name + " in [" +
                    format_number(knob.least_noise) + ", " + format_number(knob.most_noise) +
                    "] can reach on this scenario: " + format_number(at_most.value) + " .. " +
                    format_number(at_least.value));
  Agreement achieved = at_least;
  double value = least;
  for (int iteration = 0; iteration < 40; ++iteration) {
    value = 0.5 * (least + most);
    achieved = agreement_at(value);
    if (std::abs(achieved.value - options.target) <= options.tolerance) break;
    (achieved.value > options.target ? least : most) = value;
  }
  result.value = value;
  result.achieved = achieved.value;
  result.lower = achieved.lower;
  result.upper = achieved.upper;
  result.rater = rater;
  knob.field(result.rater) = value;
  return result;
}

}  // namespace frugal
