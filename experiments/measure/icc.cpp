#include "experiments/measure/icc.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "experiments/measure/distributions.h"
#include "phantoms/image.h"
#include "phantoms/user_error.h"

namespace frugal::measure {

std::string shrout_fleiss_name(IccForm form) {
  switch (form) {
    case IccForm::one_way_single: return "ICC(1,1)";
    case IccForm::two_way_random_single: return "ICC(2,1)";
    case IccForm::two_way_mixed_single: return "ICC(3,1)";
    case IccForm::one_way_average: return "ICC(1,k)";
    case IccForm::two_way_random_average: return "ICC(2,k)";
    case IccForm::two_way_mixed_average: return "ICC(3,k)";
  }
  return "?";
}

std::string mcgraw_wong_name(IccForm form) {
  switch (form) {
    case IccForm::one_way_single: return "ICC(1)";
    case IccForm::two_way_random_single: return "ICC(A,1)";
    case IccForm::two_way_mixed_single: return "ICC(C,1)";
    case IccForm::one_way_average: return "ICC(k)";
    case IccForm::two_way_random_average: return "ICC(A,k)";
    case IccForm::two_way_mixed_average: return "ICC(C,k)";
  }
  return "?";
}

std::string icc_description(IccForm form) {
  switch (form) {
    case IccForm::one_way_single: return "one-way random, single rater";
    case IccForm::two_way_random_single: return "two-way random, absolute agreement, single rater";
    case IccForm::two_way_mixed_single: return "two-way mixed, consistency, single rater";
    case IccForm::one_way_average: return "one-way random, mean of k raters";
    case IccForm::two_way_random_average: return "two-way random, absolute agreement, mean of k raters";
    case IccForm::two_way_mixed_average: return "two-way mixed, consistency, mean of k raters";
  }
  return "?";
}

std::string IccOptions::validate() const {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    std::ostringstream message;
    message << "confidence is " << confidence << "; allowed: a level strictly between 0 and 1, e.g. 0.95";
    return message.str();
  }
  return {};
}

const IccEstimate& IccResult::get(IccForm form) const {
  for (const IccEstimate& estimate : estimates) {
    if (estimate.form == form) return estimate;
  }
  FRUGAL_CHECK(false);
  return estimates[0];
}

IccAnova icc_anova(const Eigen::MatrixXd& ratings) {
  IccAnova anova;
  anova.subjects = static_cast<int>(ratings.rows());
  anova.raters = static_cast<int>(ratings.cols());
  const double n = anova.subjects;
  const double k = anova.raters;
  if (anova.subjects < 2 || anova.raters < 2) {
    std::ostringstream message;
    message << "ICC needs at least 2 subjects and 2 raters; got " << anova.subjects
            << " subject(s) and " << anova.raters << " rater(s)";
    throw UserError(message.str());
  }
  const double grand_mean = ratings.mean();
  const double total = (ratings.array() - grand_mean).square().sum();
  const double between_rows = k * (ratings.rowwise().mean().array() - grand_mean).square().sum();
  const double between_columns = n * (ratings.colwise().mean().array() - grand_mean).square().sum();
  anova.between_subjects = between_rows / (n - 1.0);
  anova.within_subjects = (total - between_rows) / (n * (k - 1.0));
  anova.between_raters = between_columns / (k - 1.0);
  // Clamp round-off: the residual sum of squares cannot be negative.
  anova.residual = std::max(0.0, total - between_rows - between_columns) / ((n - 1.0) * (k - 1.0));
  // Ratings near 1e154 in magnitude square to inf; every ICC and its F test would then be inf or
  // NaN, which the F distribution functions do not accept.
  for (const double mean_square :
       {anova.between_subjects, anova.within_subjects, anova.between_raters, anova.residual}) {
    if (!std::isfinite(mean_square)) {
      std::ostringstream message;
      message << "ICC cannot be computed: the sums of squares of the ratings overflow (largest magnitude "
              << ratings.cwiseAbs().maxCoeff()
              << "); allowed: ratings from -1e150 to 1e150 (rescale them, for example to other units)";
      throw UserError(message.str());
    }
  }
  return anova;
}

namespace {

// Interval ends from an F bound; an infinite F (a zero error mean square, i.e. perfect
// agreement) maps to the limit 1 instead of inf/inf.
double single_rater_bound(double f, double k) { return std::isinf(f) ? 1.0 : (f - 1.0) / (f + k - 1.0); }
double average_bound(double f) { return std::isinf(f) ? 1.0 : 1.0 - 1.0 / f; }

constexpr double kNotANumber = std::numeric_limits<double>::quiet_NaN();

// A form whose denominator is zero or negative is undefined for this table, for example ICC(2,k)
// when EMS > n BMS + JMS: NaN, where the formula would give a value above 1.
double form_value(double numerator, double denominator) {
  return denominator > 0.0 ? numerator / denominator : kNotANumber;
}

// F = mean square / error mean square. A zero error mean square is perfect agreement and gives
// F = inf, which the interval bounds handle; any other F that is not finite is a user's table the
// F distribution cannot take (an overflowing ratio, or 0/0 when the subjects do not differ).
double f_ratio(double mean_square, double error_mean_square, const std::string& name) {
  if (error_mean_square == 0.0 && mean_square > 0.0) return std::numeric_limits<double>::infinity();
  const double f = mean_square / error_mean_square;
  if (std::isfinite(f)) return f;
  std::ostringstream message;
  message << "ICC cannot be computed: the F ratio " << name << " = " << mean_square << " / " << error_mean_square
          << " is not a finite number; allowed: a table whose subjects differ, with ratings from -1e150 to 1e150";
  throw UserError(message.str());
}

}  // namespace

IccResult intraclass_correlation(const Eigen::MatrixXd& ratings, const IccOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  IccResult result;
  result.confidence = options.confidence;
  result.anova = icc_anova(ratings);
  const IccAnova& a = result.anova;
  const double n = a.subjects;
  const double k = a.raters;
  const double bms = a.between_subjects;
  const double wms = a.within_subjects;
  const double jms = a.between_raters;
  const double ems = a.residual;
  if (!(bms > 0.0 || wms > 0.0 || jms > 0.0)) {
    throw UserError("ICC is undefined: every rating is the same value (no variance)");
  }
  const double upper_tail = 1.0 - (1.0 - options.confidence) / 2.0;

  // One-way model (Shrout & Fleiss 1979, case 1): F = BMS/WMS on (n-1, n(k-1)).
  {
    const double df1 = n - 1.0;
    const double df2 = n * (k - 1.0);
    const double f0 = f_ratio(bms, wms, "BMS/WMS");
    const double f_low = f0 / f_quantile(upper_tail, df1, df2);
    const double f_high = f0 * f_quantile(upper_tail, df2, df1);
    const double p = f_survival(f0, df1, df2);
    result.estimates[0] = {IccForm::one_way_single, form_value(bms - wms, bms + (k - 1.0) * wms),
                           single_rater_bound(f_low, k), single_rater_bound(f_high, k),
                           f0, df1, df2, p};
    result.estimates[3] = {IccForm::one_way_average, form_value(bms - wms, bms), average_bound(f_low),
                           average_bound(f_high), f0, df1, df2, p};
  }
  // Two-way models share the test F = BMS/EMS on (n-1, (n-1)(k-1)).
  const double df1 = n - 1.0;
  const double df2 = (n - 1.0) * (k - 1.0);
  const double f0 = f_ratio(bms, ems, "BMS/EMS");
  const double p = f_survival(f0, df1, df2);
  {
    // Consistency (case 3): exact F interval.
    const double f_low = f0 / f_quantile(upper_tail, df1, df2);
    const double f_high = f0 * f_quantile(upper_tail, df2, df1);
    result.estimates[2] = {IccForm::two_way_mixed_single, form_value(bms - ems, bms + (k - 1.0) * ems),
                           single_rater_bound(f_low, k), single_rater_bound(f_high, k),
                           f0, df1, df2, p};
    result.estimates[5] = {IccForm::two_way_mixed_average, form_value(bms - ems, bms), average_bound(f_low),
                           average_bound(f_high), f0, df1, df2, p};
  }
  {
    // Absolute agreement (case 2): Satterthwaite degrees of freedom of Shrout & Fleiss (1979)
    // eq. for ICC(2,1); the average form is its Spearman-Brown step-up, which equals the
    // McGraw & Wong (1996) ICC(A,k) interval.
    const double icc = form_value(bms - ems, bms + (k - 1.0) * ems + k * (jms - ems) / n);
    const auto step_up = [k](double r) { return k * r / (1.0 + (k - 1.0) * r); };
    const double average_icc = form_value(bms - ems, bms + (jms - ems) / n);
    const double f_raters = ems > 0.0 ? jms / ems : 0.0;
    const double base = n * (1.0 + (k - 1.0) * icc) - k * icc;
    // With no residual variance F_raters is infinite and v tends to k - 1.
    const double v = ems > 0.0 ? (k - 1.0) * (n - 1.0) * std::pow(k * icc * f_raters + base, 2.0) /
                                     ((n - 1.0) * k * k * icc * icc * f_raters * f_raters + base * base)
                               : k - 1.0;
    double lower = kNotANumber;
    double upper = lower;
    if (v > 0.0 && std::isfinite(v)) {  // v can collapse for strongly negative ICCs
      const double f_star = f_quantile(upper_tail, n - 1.0, v);
      const double f_star2 = f_quantile(upper_tail, v, n - 1.0);
      const double spread = k * jms + (k * n - k - n) * ems;
      lower = n * (bms - f_star * ems) / (f_star * spread + n * bms);
      upper = n * (f_star2 * bms - ems) / (spread + n * f_star2 * bms);
    }
    result.estimates[1] = {IccForm::two_way_random_single, icc, lower, upper, f0, df1, df2, p};
    result.estimates[4] = {IccForm::two_way_random_average, average_icc,
                           step_up(lower), step_up(upper), f0, df1, df2, p};
  }
  // An undefined form has no interval either (the step-up of ICC(2,1)'s interval would otherwise
  // give ICC(2,k) an inverted one).
  for (IccEstimate& estimate : result.estimates) {
    if (std::isnan(estimate.value)) estimate.lower = estimate.upper = kNotANumber;
  }
  return result;
}

}  // namespace frugal::measure
