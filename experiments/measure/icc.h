#pragma once
// Intraclass correlation coefficients: the six forms of Shrout & Fleiss (1979), with their
// McGraw & Wong (1996) names, and confidence intervals from the F distribution.

#include <Eigen/Core>

#include <array>
#include <string>

namespace frugal::measure {

enum class IccForm {
  one_way_single,         // ICC(1,1)  = McGraw-Wong ICC(1)
  two_way_random_single,  // ICC(2,1)  = ICC(A,1), absolute agreement
  two_way_mixed_single,   // ICC(3,1)  = ICC(C,1), consistency
  one_way_average,        // ICC(1,k)  = ICC(k)
  two_way_random_average, // ICC(2,k)  = ICC(A,k)
  two_way_mixed_average,  // ICC(3,k)  = ICC(C,k)
};
inline constexpr std::array<IccForm, 6> kAllIccForms{
    IccForm::one_way_single,  IccForm::two_way_random_single,  IccForm::two_way_mixed_single,
    IccForm::one_way_average, IccForm::two_way_random_average, IccForm::two_way_mixed_average};

std::string shrout_fleiss_name(IccForm form);  // "ICC(2,1)"
std::string mcgraw_wong_name(IccForm form);    // "ICC(A,1)"
std::string icc_description(IccForm form);     // "two-way random, absolute agreement, single rater"

struct IccOptions {
  double confidence = 0.95;  // two-sided level of the intervals
  std::string validate() const;  // empty when valid
};

// Mean squares of the two-way ANOVA without replication (subjects x raters).
struct IccAnova {
  int subjects = 0;
  int raters = 0;
  double between_subjects = 0.0;  // BMS, df n-1
  double within_subjects = 0.0;   // WMS, df n(k-1) (one-way model)
  double between_raters = 0.0;    // JMS, df k-1
  double residual = 0.0;          // EMS, df (n-1)(k-1)
};

struct IccEstimate {
  IccForm form = IccForm::one_way_single;
  double value = 0.0;
  double lower = 0.0;
  double upper = 0.0;
  double f_statistic = 0.0;  // test of ICC = 0
  double df1 = 0.0;
  double df2 = 0.0;
  double p_value = 1.0;
};

struct IccResult {
  IccAnova anova;
  double confidence = 0.95;
  std::array<IccEstimate, 6> estimates;  // in kAllIccForms order
  const IccEstimate& get(IccForm form) const;
};

IccAnova icc_anova(const Eigen::MatrixXd& ratings);

// ratings: one row per subject, one column per rater, no missing values. Throws UserError for
// fewer than 2 subjects or raters, when every rating is the same, or when a mean square or F ratio
// is not finite (ratings beyond about 1e150 in magnitude). A form whose formula has a zero or
// negative denominator for this table has value and interval NaN.
IccResult intraclass_correlation(const Eigen::MatrixXd& ratings, const IccOptions& options = {});

}  // namespace frugal::measure
