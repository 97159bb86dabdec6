#include "experiments/measure/correlation.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <sstream>

#include "experiments/measure/distributions.h"
#include "phantoms/user_error.h"

namespace frugal::measure {

std::string to_string(CorrelationKind kind) {
  return kind == CorrelationKind::pearson ? "pearson" : "spearman";
}

std::string CorrelationOptions::validate() const {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    std::ostringstream message;
    message << "confidence is " << confidence << "; allowed: a level strictly between 0 and 1, e.g. 0.95";
    return message.str();
  }
  return {};
}

std::vector<double> average_ranks(const std::vector<double>& values) {
  std::vector<std::size_t> order(values.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&values](std::size_t a, std::size_t b) { return values[a] < values[b]; });
  std::vector<double> ranks(values.size());
  std::size_t start = 0;
  while (start < order.size()) {
    std::size_t end = start + 1;
    while (end < order.size() && values[order[end]] == values[order[start]]) ++end;
    // Positions start..end-1 hold ranks start+1..end; ties share their mean.
    const double rank = 0.5 * static_cast<double>(start + 1 + end);
    for (std::size_t i = start; i < end; ++i) ranks[order[i]] = rank;
    start = end;
  }
  return ranks;
}

double pearson_coefficient(const std::vector<double>& x, const std::vector<double>& y) {
  const double n = static_cast<double>(x.size());
  const double mean_x = std::accumulate(x.begin(), x.end(), 0.0) / n;
  const double mean_y = std::accumulate(y.begin(), y.end(), 0.0) / n;
  double sxy = 0.0;
  double sxx = 0.0;
  double syy = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    sxy += (x[i] - mean_x) * (y[i] - mean_y);
    sxx += (x[i] - mean_x) * (x[i] - mean_x);
    syy += (y[i] - mean_y) * (y[i] - mean_y);
  }
  if (!(sxx > 0.0) || !(syy > 0.0)) {
    throw UserError("correlation is undefined: one of the two variables is constant");
  }
  return std::clamp(sxy / std::sqrt(sxx * syy), -1.0, 1.0);
}

CorrelationResult correlation(const std::vector<double>& x, const std::vector<double>& y,
                              const CorrelationOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  if (x.size() != y.size()) throw UserError("correlation needs the same number of values in both variables");
  if (x.size() < 3) {
    throw UserError("correlation needs at least 3 pairs; got " + std::to_string(x.size()));
  }
  CorrelationResult result;
  result.kind = options.kind;
  result.subjects = static_cast<int>(x.size());
  result.coefficient = options.kind == CorrelationKind::pearson
                           ? pearson_coefficient(x, y)
                           : pearson_coefficient(average_ranks(x), average_ranks(y));
  const double r = result.coefficient;
  const double n = static_cast<double>(x.size());
  if (std::fabs(r) >= 1.0) {
    result.p_value = 0.0;
  } else {
    const double t = r * std::sqrt((n - 2.0) / (1.0 - r * r));
    result.p_value = student_t_two_sided_p(t, n - 2.0);
  }
  if (n >= 4.0) {
    const double variance = options.kind == CorrelationKind::pearson ? 1.0 : 1.06;
    const double half_width =
        normal_quantile(1.0 - (1.0 - options.confidence) / 2.0) * std::sqrt(variance / (n - 3.0));
    const double z = std::atanh(std::clamp(r, -1.0 + 1e-15, 1.0 - 1e-15));
    result.lower = std::tanh(z - half_width);
    result.upper = std::tanh(z + half_width);
  } else {
    result.lower = result.upper = std::numeric_limits<double>::quiet_NaN();
  }
  return result;
}

}  // namespace frugal::measure
