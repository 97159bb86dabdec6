#include "experiments/measure/bland_altman.h"

#include <cmath>
#include <sstream>

#include "experiments/measure/distributions.h"
#include "phantoms/user_error.h"

namespace frugal::measure {

std::string BlandAltmanOptions::validate() const {
  std::ostringstream message;
  if (!(limit_multiplier > 0.0)) {
    message << "limit multiplier is " << limit_multiplier << "; allowed: a positive number, usually 1.96 or 2";
  } else if (!(confidence > 0.0 && confidence < 1.0)) {
    message << "confidence is " << confidence << "; allowed: a level strictly between 0 and 1, e.g. 0.95";
  }
  return message.str();
}

BlandAltmanResult bland_altman(const std::vector<double>& first, const std::vector<double>& second,
                               const BlandAltmanOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  if (first.size() != second.size()) {
    throw UserError("Bland-Altman needs the same number of measurements from both methods");
  }
  const std::size_t count = first.size();
  if (count < 3) {
    throw UserError("Bland-Altman needs at least 3 subjects measured by both methods; got " +
                    std::to_string(count));
  }
  const double n = static_cast<double>(count);
  double sum = 0.0;
  double sum_means = 0.0;
  for (std::size_t i = 0; i < count; ++i) {
    sum += first[i] - second[i];
    sum_means += 0.5 * (first[i] + second[i]);
  }
  BlandAltmanResult result;
  result.subjects = static_cast<int>(count);
  result.bias = sum / n;
  result.mean_of_means = sum_means / n;
  double squares = 0.0;
  for (std::size_t i = 0; i < count; ++i) {
    const double deviation = first[i] - second[i] - result.bias;
    squares += deviation * deviation;
  }
  const double sd = std::sqrt(squares / (n - 1.0));
  result.difference_sd = sd;
  result.lower_limit = result.bias - options.limit_multiplier * sd;
  result.upper_limit = result.bias + options.limit_multiplier * sd;

  const double t = student_t_quantile(1.0 - (1.0 - options.confidence) / 2.0, n - 1.0);
  const double bias_error = sd / std::sqrt(n);
  // Bland & Altman (1986): the standard error of a limit is about sqrt(3 s^2 / n).
  const double limit_error = std::sqrt(3.0 * sd * sd / n);
  result.bias_interval = {result.bias - t * bias_error, result.bias + t * bias_error};
  result.lower_limit_interval = {result.lower_limit - t * limit_error, result.lower_limit + t * limit_error};
  result.upper_limit_interval = {result.upper_limit - t * limit_error, result.upper_limit + t * limit_error};
  return result;
}

}  // namespace frugal::measure
