#include "experiments/measure/kappa.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "experiments/measure/distributions.h"
#include "phantoms/user_error.h"

namespace frugal::measure {

std::string to_string(KappaWeights weights) {
  switch (weights) {
    case KappaWeights::none: return "none";
    case KappaWeights::linear: return "linear";
    case KappaWeights::quadratic: return "quadratic";
  }
  return "?";
}

std::string CohenKappaOptions::validate() const {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    std::ostringstream message;
    message << "confidence is " << confidence << "; allowed: a level strictly between 0 and 1, e.g. 0.95";
    return message.str();
  }
  return {};
}

int category_index(const std::vector<double>& categories, double value) {
  for (std::size_t index = 0; index < categories.size(); ++index) {
    if (categories[index] == value) return static_cast<int>(index);
  }
  return -1;
}

Eigen::MatrixXd kappa_agreement_weights(int categories, KappaWeights weights) {
  Eigen::MatrixXd w = Eigen::MatrixXd::Identity(categories, categories);
  if (weights == KappaWeights::none || categories < 2) return w;
  const double span = categories - 1.0;
  for (int i = 0; i < categories; ++i) {
    for (int j = 0; j < categories; ++j) {
      const double distance = std::fabs(static_cast<double>(i - j)) / span;
      w(i, j) = weights == KappaWeights::linear ? 1.0 - distance : 1.0 - distance * distance;
    }
  }
  return w;
}

CohenKappaResult cohen_kappa_from_table(const Eigen::MatrixXd& counts,
                                        const CohenKappaOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  if (counts.rows() != counts.cols() || counts.rows() < 2) {
    throw UserError("Cohen's kappa needs a square table of at least 2 categories");
  }
  if ((counts.array() < 0.0).any()) throw UserError("Cohen's kappa table has a negative count");
  const double total = counts.sum();
  if (!(total > 0.0)) throw UserError("Cohen's kappa table is empty");

  const int c = static_cast<int>(counts.rows());
  const Eigen::MatrixXd w = kappa_agreement_weights(c, options.weights);
  const Eigen::MatrixXd p = counts / total;
  const Eigen::VectorXd row = p.rowwise().sum();
  const Eigen::RowVectorXd column = p.colwise().sum();
  const Eigen::MatrixXd expected = row * column;

  CohenKappaResult result;
  result.subjects = static_cast<int>(std::lround(total));
  result.confusion = counts;
  result.observed_agreement = (w.array() * p.array()).sum();
  result.expected_agreement = (w.array() * expected.array()).sum();
  const double p_o = result.observed_agreement;
  const double p_e = result.expected_agreement;
  if (!(1.0 - p_e > 1e-12)) {
    throw UserError("Cohen's kappa is undefined: both raters used a single category for every "
                    "subject, so chance agreement is 1");
  }
  const double kappa = (p_o - p_e) / (1.0 - p_e);
  result.kappa = kappa;

  // Fleiss, Cohen & Everitt (1969) large-sample variances.
  const Eigen::VectorXd row_mean_weight = w * column.transpose();  // wbar_i.
  const Eigen::RowVectorXd column_mean_weight = row.transpose() * w;  // wbar_.j
  double sum = 0.0;
  double null_sum = 0.0;
  for (int i = 0; i < c; ++i) {
    for (int j = 0; j < c; ++j) {
      const double margin = row_mean_weight(i) + column_mean_weight(j);
      sum += p(i, j) * std::pow(w(i, j) - margin * (1.0 - kappa), 2.0);
      null_sum += expected(i, j) * std::pow(w(i, j) - margin, 2.0);
    }
  }
  const double scale = total * (1.0 - p_e) * (1.0 - p_e);
  result.standard_error = std::sqrt(std::max(0.0, sum - std::pow(kappa - p_e * (1.0 - kappa), 2.0)) / scale);
  result.null_standard_error = std::sqrt(std::max(0.0, null_sum - p_e * p_e) / scale);
  const double z_interval = normal_quantile(1.0 - (1.0 - options.confidence) / 2.0);
  result.lower = kappa - z_interval * result.standard_error;
  result.upper = kappa + z_interval * result.standard_error;
  if (result.null_standard_error > 0.0) {
    result.z = kappa / result.null_standard_error;
    result.p_value = 2.0 * normal_cdf(-std::fabs(result.z));
  }
  return result;
}

namespace {

int checked_category(const std::vector<double>& categories, double value, const char* who,
                     std::size_t case_index) {
  const int index = category_index(categories, value);
  if (index < 0) {
    std::ostringstream message;
    message << who << " rating " << value << " of case " << case_index + 1
            << " is not one of the categories [";
    for (std::size_t i = 0; i < categories.size(); ++i) message << (i ? "," : "") << categories[i];
    message << "]";
    throw UserError(message.str());
  }
  return index;
}

}  // namespace

CohenKappaResult cohen_kappa(const std::vector<double>& rater_a, const std::vector<double>& rater_b,
                             const std::vector<double>& categories,
                             const CohenKappaOptions& options) {
  if (rater_a.size() != rater_b.size()) {
    throw UserError("Cohen's kappa needs the same number of ratings from both raters");
  }
  if (categories.size() < 2) throw UserError("Cohen's kappa needs at least 2 categories");
  const int c = static_cast<int>(categories.size());
  Eigen::MatrixXd counts = Eigen::MatrixXd::Zero(c, c);
  for (std::size_t i = 0; i < rater_a.size(); ++i) {
    counts(checked_category(categories, rater_a[i], "first rater's", i),
           checked_category(categories, rater_b[i], "second rater's", i)) += 1.0;
  }
  return cohen_kappa_from_table(counts, options);
}

FleissKappaResult fleiss_kappa_from_counts(const Eigen::MatrixXd& counts) {
  const int subjects = static_cast<int>(counts.rows());
  const int c = static_cast<int>(counts.cols());
  if (subjects < 2 || c < 2) throw UserError("Fleiss' kappa needs at least 2 subjects and 2 categories");
  const double m = counts.row(0).sum();
  for (int i = 0; i < subjects; ++i) {
    if (std::fabs(counts.row(i).sum() - m) > 1e-9) {
      std::ostringstream message;
      message << "Fleiss' kappa needs the same number of raters for every subject; subject "
              << i + 1 << " has " << counts.row(i).sum() << ", subject 1 has " << m;
      throw UserError(message.str());
    }
  }
  if (m < 2.0) throw UserError("Fleiss' kappa needs at least 2 raters per subject");

  FleissKappaResult result;
  result.subjects = subjects;
  result.raters = static_cast<int>(std::lround(m));
  const double n = subjects;
  // Fleiss (1971): P_i = (sum_j n_ij^2 - m) / (m (m-1)); p_j = sum_i n_ij / (N m).
  result.observed_agreement =
      ((counts.array().square().rowwise().sum() - m) / (m * (m - 1.0))).mean();
  const Eigen::RowVectorXd proportion = counts.colwise().sum() / (n * m);
  result.expected_agreement = proportion.squaredNorm();
  const double p_e = result.expected_agreement;
  if (!(1.0 - p_e > 1e-12)) {
    throw UserError("Fleiss' kappa is undefined: every rater used the same category for every subject");
  }
  result.kappa = (result.observed_agreement - p_e) / (1.0 - p_e);

  double pq = 0.0;
  double pq_skew = 0.0;
  result.category_proportions.resize(static_cast<std::size_t>(c));
  result.category_kappas.resize(static_cast<std::size_t>(c));
  for (int j = 0; j < c; ++j) {
    const double p = proportion(j);
    const double q = 1.0 - p;
    pq += p * q;
    pq_skew += p * q * (q - p);
    result.category_proportions[static_cast<std::size_t>(j)] = p;
    const double disagreement = (counts.col(j).array() * (m - counts.col(j).array())).sum();
    result.category_kappas[static_cast<std::size_t>(j)] =
        p > 0.0 && q > 0.0 ? 1.0 - disagreement / (n * m * (m - 1.0) * p * q)
                           : std::numeric_limits<double>::quiet_NaN();
  }
  // Fleiss, Nee & Landis (1979) standard error under kappa = 0.
  result.null_standard_error =
      std::sqrt(2.0) / (pq * std::sqrt(n * m * (m - 1.0))) * std::sqrt(std::max(0.0, pq * pq - pq_skew));
  if (result.null_standard_error > 0.0) {
    result.z = result.kappa / result.null_standard_error;
    result.p_value = 2.0 * normal_cdf(-std::fabs(result.z));
  }
  return result;
}

FleissKappaResult fleiss_kappa(const Eigen::MatrixXd& ratings, const std::vector<double>& categories) {
  if (categories.size() < 2) throw UserError("Fleiss' kappa needs at least 2 categories");
  Eigen::MatrixXd counts = Eigen::MatrixXd::Zero(ratings.rows(), static_cast<Eigen::Index>(categories.size()));
  for (Eigen::Index i = 0; i < ratings.rows(); ++i) {
    for (Eigen::Index r = 0; r < ratings.cols(); ++r) {
      counts(i, checked_category(categories, ratings(i, r), "a", static_cast<std::size_t>(i))) += 1.0;
    }
  }
  return fleiss_kappa_from_counts(counts);
}

}  // namespace frugal::measure
