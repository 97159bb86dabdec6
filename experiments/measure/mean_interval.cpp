#include "experiments/measure/mean_interval.h"

#include <cmath>
#include <limits>

#include "experiments/measure/distributions.h"

namespace frugal::measure {

void mean_interval(const std::vector<double>& values, double confidence, double& mean, double& lower, double& upper) {
  const auto n = static_cast<double>(values.size());
  mean = lower = upper = std::numeric_limits<double>::quiet_NaN();
  if (values.empty()) return;
  double sum = 0.0;
  for (double v : values) sum += v;
  mean = sum / n;
  if (values.size() < 2) return;
  double squares = 0.0;
  for (double v : values) squares += (v - mean) * (v - mean);
  const double half = student_t_quantile(0.5 + confidence / 2.0, n - 1.0) * std::sqrt(squares / (n - 1.0) / n);
  lower = mean - half;
  upper = mean + half;
}

}  // namespace frugal::measure
