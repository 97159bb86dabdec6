#pragma once
// Repeatability of repeated measurements of the same subjects (rescans, re-reads): within-subject
// SD s_w and the repeatability coefficient 1.96 * sqrt(2) * s_w = 2.77 s_w (Bland & Altman,
// BMJ 1996 "Measurement error"), the value below which 95% of differences between two
// measurements of one subject are expected to fall.

#include <Eigen/Core>

#include <string>

namespace frugal::measure {

struct RepeatabilityOptions {
  double confidence = 0.95;
  std::string validate() const;  // empty when valid
};

struct RepeatabilityResult {
  int subjects = 0;
  int replicates = 0;
  double within_subject_sd = 0.0;      // s_w = sqrt(within-subject mean square), df n(k-1)
  double within_subject_sd_lower = 0.0;  // chi-squared interval on n(k-1) df
  double within_subject_sd_upper = 0.0;
  double repeatability_coefficient = 0.0;  // 1.96 * sqrt(2) * s_w
  double repeatability_coefficient_lower = 0.0;
  double repeatability_coefficient_upper = 0.0;
  double degrees_of_freedom = 0.0;
  // With exactly two replicates: 2 x SD of the paired differences, the British Standards
  // Institution coefficient used in Bland & Altman (1986); NaN otherwise.
  double paired_difference_coefficient = 0.0;
};

// The exact factor 1.96 * sqrt(2) = 2.7718585823 behind the rounded "2.77".
double repeatability_factor();

// measurements: one row per subject, one column per replicate (k >= 2, no missing values).
RepeatabilityResult repeatability(const Eigen::MatrixXd& measurements,
                                  const RepeatabilityOptions& options = {});

}  // namespace frugal::measure
