#include "experiments/measure/repeatability.h"

#include <cmath>
#include <limits>
#include <sstream>

#include "experiments/measure/distributions.h"
#include "phantoms/user_error.h"

namespace frugal::measure {

std::string RepeatabilityOptions::validate() const {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    std::ostringstream message;
    message << "confidence is " << confidence << "; allowed: a level strictly between 0 and 1, e.g. 0.95";
    return message.str();
  }
  return {};
}

double repeatability_factor() { return 1.96 * std::sqrt(2.0); }

RepeatabilityResult repeatability(const Eigen::MatrixXd& measurements,
                                  const RepeatabilityOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  const Eigen::Index n = measurements.rows();
  const Eigen::Index k = measurements.cols();
  if (n < 2 || k < 2) {
    std::ostringstream message;
    message << "repeatability needs at least 2 subjects with at least 2 replicates each; got " << n
            << " subject(s) and " << k << " replicate(s)";
    throw UserError(message.str());
  }
  RepeatabilityResult result;
  result.subjects = static_cast<int>(n);
  result.replicates = static_cast<int>(k);
  const Eigen::VectorXd subject_means = measurements.rowwise().mean();
  const double within_squares =
      (measurements.colwise() - subject_means).array().square().sum();
  const double df = static_cast<double>(n) * static_cast<double>(k - 1);
  result.degrees_of_freedom = df;
  result.within_subject_sd = std::sqrt(within_squares / df);
  // s_w^2 * df / sigma^2 ~ chi^2(df), so sigma lies in s_w * sqrt(df / chi^2 quantiles).
  const double alpha = 1.0 - options.confidence;
  result.within_subject_sd_lower = result.within_subject_sd * std::sqrt(df / chi_squared_quantile(1.0 - alpha / 2.0, df));
  result.within_subject_sd_upper = result.within_subject_sd * std::sqrt(df / chi_squared_quantile(alpha / 2.0, df));
  const double factor = repeatability_factor();
  result.repeatability_coefficient = factor * result.within_subject_sd;
  result.repeatability_coefficient_lower = factor * result.within_subject_sd_lower;
  result.repeatability_coefficient_upper = factor * result.within_subject_sd_upper;

  result.paired_difference_coefficient = std::numeric_limits<double>::quiet_NaN();
  if (k == 2) {
    const Eigen::ArrayXd differences = (measurements.col(0) - measurements.col(1)).array();
    const double mean = differences.mean();
    result.paired_difference_coefficient =
        2.0 * std::sqrt((differences - mean).square().sum() / static_cast<double>(n - 1));
  }
  return result;
}

}  // namespace frugal::measure
