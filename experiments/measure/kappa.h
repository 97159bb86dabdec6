#pragma once
// Chance-corrected agreement on categories: Cohen's kappa for two raters (unweighted, linear or
// quadratic weights; Cohen 1968) and Fleiss' kappa for several raters (Fleiss 1971).
// Both always take the full, ordered category list: a grade that nobody used still sets the
// spacing of the weights.

#include <Eigen/Core>

#include <string>
#include <vector>

namespace frugal::measure {

enum class KappaWeights { none, linear, quadratic };
std::string to_string(KappaWeights weights);

struct CohenKappaOptions {
  KappaWeights weights = KappaWeights::none;
  double confidence = 0.95;
  std::string validate() const;  // empty when valid
};

struct CohenKappaResult {
  double kappa = 0.0;
  double observed_agreement = 0.0;  // weighted p_o
  double expected_agreement = 0.0;  // weighted p_e
  // Large-sample standard errors of Fleiss, Cohen & Everitt (1969): around the estimate (for the
  // interval) and under kappa = 0 (for the z test).
  double standard_error = 0.0;
  double null_standard_error = 0.0;
  double lower = 0.0;
  double upper = 0.0;
  double z = 0.0;
  double p_value = 1.0;  // two-sided
  int subjects = 0;
  Eigen::MatrixXd confusion;  // counts, rows rater A, columns rater B, in category order
};

// Agreement weights w_ij in [0, 1] for c ordered categories (1 on the diagonal); the linear
// and quadratic forms are Cicchetti-Allison and Fleiss-Cohen, equivalent to Cohen's
// disagreement weights.
Eigen::MatrixXd kappa_agreement_weights(int categories, KappaWeights weights);

// From a c x c table of counts (rows rater A, columns rater B).
CohenKappaResult cohen_kappa_from_table(const Eigen::MatrixXd& counts,
                                        const CohenKappaOptions& options = {});

// From paired ratings; each value must be one of `categories`, else UserError names the case.
CohenKappaResult cohen_kappa(const std::vector<double>& rater_a, const std::vector<double>& rater_b,
                             const std::vector<double>& categories,
                             const CohenKappaOptions& options = {});

struct FleissKappaResult {
  double kappa = 0.0;
  double observed_agreement = 0.0;  // mean P_i
  double expected_agreement = 0.0;  // sum p_j^2
  // Standard error under kappa = 0 (Fleiss, Nee & Landis 1979) and its z test.
  double null_standard_error = 0.0;
  double z = 0.0;
  double p_value = 1.0;
  int subjects = 0;
  int raters = 0;
  std::vector<double> category_proportions;  // p_j
  std::vector<double> category_kappas;       // kappa_j, NaN for an unused category
};

// counts: one row per subject, one column per category, each row summing to the same number of
// raters m >= 2.
FleissKappaResult fleiss_kappa_from_counts(const Eigen::MatrixXd& counts);

// ratings: one row per subject, one column per rater; values must be one of `categories`.
FleissKappaResult fleiss_kappa(const Eigen::MatrixXd& ratings, const std::vector<double>& categories);

// Index of `value` in `categories`, or -1.
int category_index(const std::vector<double>& categories, double value);

}  // namespace frugal::measure
