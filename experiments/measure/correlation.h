#pragma once
// Pearson and Spearman correlation with Fisher-z confidence intervals and t-test p-values.
// Correlation measures association, not agreement: report it beside ICC or Bland-Altman,
// never instead of them (Bland & Altman 1986).

#include <string>
#include <vector>

namespace frugal::measure {

enum class CorrelationKind { pearson, spearman };
std::string to_string(CorrelationKind kind);

struct CorrelationOptions {
  CorrelationKind kind = CorrelationKind::pearson;
  double confidence = 0.95;
  std::string validate() const;  // empty when valid
};

struct CorrelationResult {
  CorrelationKind kind = CorrelationKind::pearson;
  int subjects = 0;
  double coefficient = 0.0;
  // Fisher z interval; standard error 1/sqrt(n-3) for Pearson and sqrt(1.06/(n-3)) for Spearman
  // (Fieller, Hartley & Pearson 1957). NaN when n < 4.
  double lower = 0.0;
  double upper = 0.0;
  double p_value = 1.0;  // two-sided, t = r sqrt((n-2)/(1-r^2)) on n-2 df
};

// Ranks 1..n, ties given the average of the ranks they span.
std::vector<double> average_ranks(const std::vector<double>& values);

double pearson_coefficient(const std::vector<double>& x, const std::vector<double>& y);

// Needs at least 3 pairs and neither variable constant (UserError otherwise).
CorrelationResult correlation(const std::vector<double>& x, const std::vector<double>& y,
                              const CorrelationOptions& options = {});

}  // namespace frugal::measure
