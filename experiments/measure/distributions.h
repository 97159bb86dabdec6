#pragma once
// Distribution functions behind the confidence intervals and p-values of the agreement
// statistics. Written here so the measure part needs no statistics library; quantiles are found
// by bisection on the monotone distribution function, which is slow-but-sure and deterministic.

namespace frugal::measure {

// Regularized incomplete beta I_x(a, b), for a, b > 0 and 0 <= x <= 1 (continued fraction,
// DLMF 8.17.22).
double regularized_incomplete_beta(double a, double b, double x);
// Regularized lower incomplete gamma P(a, x), for a > 0 and x >= 0 (series, or the continued
// fraction of DLMF 8.9.2 for the upper part).
double regularized_lower_gamma(double a, double x);

double normal_cdf(double z);
double normal_quantile(double p);  // 0 < p < 1

double student_t_cdf(double t, double degrees_of_freedom);
double student_t_quantile(double p, double degrees_of_freedom);
// P(|T| >= |t|), computed directly so that tiny p-values keep their precision.
double student_t_two_sided_p(double t, double degrees_of_freedom);

double f_cdf(double f, double df1, double df2);
// P(F >= f), computed directly so that tiny p-values keep their precision.
double f_survival(double f, double df1, double df2);
double f_quantile(double p, double df1, double df2);

double chi_squared_cdf(double x, double degrees_of_freedom);
double chi_squared_quantile(double p, double degrees_of_freedom);

}  // namespace frugal::measure
