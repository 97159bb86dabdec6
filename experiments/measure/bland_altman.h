#pragma once
// Bland-Altman agreement between two methods (or raters) measuring the same subjects:
// bias, limits of agreement and their confidence intervals (Bland & Altman, Lancet 1986;
// Stat Methods Med Res 1999).

#include <string>
#include <vector>

namespace frugal::measure {

struct BlandAltmanOptions {
  // Limits are bias +- multiplier * SD of the differences: 1.96 as in the 1999 paper; the 1986
  // paper used 2.
  double limit_multiplier = 1.96;
  double confidence = 0.95;  // level of the intervals around the bias and the limits
  std::string validate() const;  // empty when valid
};

struct Interval {
  double lower = 0.0;
  double upper = 0.0;
};

struct BlandAltmanResult {
  int subjects = 0;
  double bias = 0.0;                  // mean of (first - second)
  double difference_sd = 0.0;         // SD of the differences, n-1 denominator
  double lower_limit = 0.0;           // bias - multiplier * SD
  double upper_limit = 0.0;           // bias + multiplier * SD
  Interval bias_interval;             // bias +- t * SD / sqrt(n)
  Interval lower_limit_interval;      // limit +- t * sqrt(3 SD^2 / n), Bland & Altman 1986
  Interval upper_limit_interval;
  double mean_of_means = 0.0;         // average of (first + second) / 2, for context
};

// first[i] and second[i] are the same subject measured twice; needs at least 3 subjects.
BlandAltmanResult bland_altman(const std::vector<double>& first, const std::vector<double>& second,
                               const BlandAltmanOptions& options = {});

}  // namespace frugal::measure
