#include "experiments/measure/distributions.h"

#include <cmath>
#include <functional>
#include <limits>

#include "phantoms/image.h"

namespace frugal::measure {
namespace {

constexpr double kTiny = 1e-300;
constexpr double kEpsilon = 1e-15;
constexpr int kMaxTerms = 10000;

// Continued fraction of I_x(a, b) by the modified Lentz method; converges for x < (a+1)/(a+b+2).
double beta_continued_fraction(double a, double b, double x) {
  double c = 1.0;
  double d = 1.0 - (a + b) * x / (a + 1.0);
  if (std::fabs(d) < kTiny) d = kTiny;
  d = 1.0 / d;
  double result = d;
  for (int m = 1; m <= kMaxTerms; ++m) {
    const double two_m = 2.0 * m;
    // Even step d_{2m}, then odd step d_{2m+1}.
    double numerator = m * (b - m) * x / ((a + two_m - 1.0) * (a + two_m));
    d = 1.0 + numerator * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1.0 + numerator / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    result *= d * c;
    numerator = -(a + m) * (a + b + m) * x / ((a + two_m) * (a + two_m + 1.0));
    d = 1.0 + numerator * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1.0 + numerator / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    const double step = d * c;
    result *= step;
    if (std::fabs(step - 1.0) < kEpsilon) break;
  }
  return result;
}

// Smallest x in [low, high] with increasing(x) >= target, by bisection; deterministic.
double bisect(const std::function<double(double)>& increasing, double target, double low,
              double high) {
  for (int iteration = 0; iteration < 300; ++iteration) {
    const double middle = 0.5 * (low + high);
    if (middle <= low || middle >= high) break;
    if (increasing(middle) < target) {
      low = middle;
    } else {
      high = middle;
    }
  }
  return 0.5 * (low + high);
}

// Quantile of a distribution on (0, inf), searched on log(x) so that small and large quantiles
// keep their relative precision.
double positive_quantile(const std::function<double(double)>& cdf, double p) {
  const double log_x =
      bisect([&cdf](double value) { return cdf(std::exp(value)); }, p, -700.0, 700.0);
  return std::exp(log_x);
}

}  // namespace

double regularized_incomplete_beta(double a, double b, double x) {
  FRUGAL_CHECK(a > 0.0 && b > 0.0 && x >= 0.0 && x <= 1.0);
  if (x == 0.0 || x == 1.0) return x;
  const double log_front = std::lgamma(a + b) - std::lgamma(a) - std::lgamma(b) +
                           a * std::log(x) + b * std::log1p(-x);
  if (x < (a + 1.0) / (a + b + 2.0)) {
    return std::exp(log_front) * beta_continued_fraction(a, b, x) / a;
  }
  return 1.0 - std::exp(log_front) * beta_continued_fraction(b, a, 1.0 - x) / b;
}

double regularized_lower_gamma(double a, double x) {
  FRUGAL_CHECK(a > 0.0 && x >= 0.0);
  if (x == 0.0) return 0.0;
  const double log_front = a * std::log(x) - x - std::lgamma(a);
  if (x < a + 1.0) {
    // P = x^a e^-x / Gamma(a+1) * sum_n x^n / ((a+1)...(a+n)).
    double term = 1.0 / a;
    double sum = term;
    for (int n = 1; n <= kMaxTerms; ++n) {
      term *= x / (a + n);
      sum += term;
      if (std::fabs(term) < std::fabs(sum) * kEpsilon) break;
    }
    return sum * std::exp(log_front);
  }
  // Q = x^a e^-x / Gamma(a) / (x+1-a - 1(1-a)/(x+3-a - 2(2-a)/(x+5-a - ...))), Lentz method.
  double b = x + 1.0 - a;
  double c = 1.0 / kTiny;
  double d = 1.0 / b;
  double result = d;
  for (int n = 1; n <= kMaxTerms; ++n) {
    const double numerator = -n * (n - a);
    b += 2.0;
    d = numerator * d + b;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = b + numerator / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    const double step = d * c;
    result *= step;
    if (std::fabs(step - 1.0) < kEpsilon) break;
  }
  return 1.0 - std::exp(log_front) * result;
}

double normal_cdf(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }

double normal_quantile(double p) {
  FRUGAL_CHECK(p > 0.0 && p < 1.0);
  return bisect(normal_cdf, p, -40.0, 40.0);
}

double student_t_cdf(double t, double degrees_of_freedom) {
  FRUGAL_CHECK(degrees_of_freedom > 0.0);
  const double tail = 0.5 * student_t_two_sided_p(t, degrees_of_freedom);
  return t >= 0.0 ? 1.0 - tail : tail;
}

double student_t_two_sided_p(double t, double degrees_of_freedom) {
  FRUGAL_CHECK(degrees_of_freedom > 0.0);
  if (std::isinf(t)) return 0.0;
  return regularized_incomplete_beta(0.5 * degrees_of_freedom, 0.5,
                                     degrees_of_freedom / (degrees_of_freedom + t * t));
}

double student_t_quantile(double p, double degrees_of_freedom) {
  FRUGAL_CHECK(p > 0.0 && p < 1.0 && degrees_of_freedom > 0.0);
  if (p == 0.5) return 0.0;
  // T^2 follows F(1, df), so the quantile comes from the F quantile of the central mass.
  const double magnitude = std::sqrt(f_quantile(std::fabs(2.0 * p - 1.0), 1.0, degrees_of_freedom));
  return p > 0.5 ? magnitude : -magnitude;
}

double f_cdf(double f, double df1, double df2) {
  FRUGAL_CHECK(df1 > 0.0 && df2 > 0.0);
  if (f <= 0.0) return 0.0;
  if (std::isinf(f)) return 1.0;
  return regularized_incomplete_beta(0.5 * df1, 0.5 * df2, df1 * f / (df1 * f + df2));
}

double f_survival(double f, double df1, double df2) {
  FRUGAL_CHECK(df1 > 0.0 && df2 > 0.0);
  if (f <= 0.0) return 1.0;
  if (std::isinf(f)) return 0.0;
  return regularized_incomplete_beta(0.5 * df2, 0.5 * df1, df2 / (df2 + df1 * f));
}

double f_quantile(double p, double df1, double df2) {
  FRUGAL_CHECK(p > 0.0 && p < 1.0 && df1 > 0.0 && df2 > 0.0);
  return positive_quantile([df1, df2](double f) { return f_cdf(f, df1, df2); }, p);
}

double chi_squared_cdf(double x, double degrees_of_freedom) {
  FRUGAL_CHECK(degrees_of_freedom > 0.0);
  if (x <= 0.0) return 0.0;
  if (std::isinf(x)) return 1.0;
  return regularized_lower_gamma(0.5 * degrees_of_freedom, 0.5 * x);
}

double chi_squared_quantile(double p, double degrees_of_freedom) {
  FRUGAL_CHECK(p > 0.0 && p < 1.0 && degrees_of_freedom > 0.0);
  return positive_quantile(
      [degrees_of_freedom](double x) { return chi_squared_cdf(x, degrees_of_freedom); }, p);
}

}  // namespace frugal::measure
