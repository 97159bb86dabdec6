#include "experiments/baselines/void_pattern_classifier.h"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::baselines {

std::string VoidPatternClassifierOptions::validate() const {
  if (features.empty()) return "features: the list is empty; name at least one feature";
  std::set<VoidPatternFeature> seen;
  for (VoidPatternFeature feature : features) {
    if (static_cast<std::size_t>(feature) >= kVoidPatternFeatureCount)
      return "features: value " + std::to_string(static_cast<int>(feature)) + " is not a feature";
    if (!seen.insert(feature).second) return "features: " + to_string(feature) + " is listed twice";
  }
  if (!(ridge >= 0.0 && std::isfinite(ridge)))
    return "ridge = " + format_number(ridge) + ": must be zero or a positive number";
  return "";
}

namespace {

using Index = Eigen::Index;

Eigen::VectorXd selected(const VoidPatternFeatures& features, const std::vector<VoidPatternFeature>& used) {
  Eigen::VectorXd x(static_cast<Index>(used.size()));
  for (std::size_t f = 0; f < used.size(); ++f) x(static_cast<Index>(f)) = features[used[f]];
  return x;
}

}  // namespace

VoidPatternClassifier VoidPatternClassifier::fit(const std::vector<VoidPatternFeatures>& examples,
                                                 const std::vector<std::string>& patterns,
                                                 const VoidPatternClassifierOptions& options) {
  const std::string problem = options.validate();
  if (!problem.empty()) throw UserError("void_pattern_classifier." + problem);
  if (examples.size() != patterns.size())
    throw UserError("void_pattern_classifier: " + std::to_string(examples.size()) + " feature vectors but " +
                    std::to_string(patterns.size()) + " pattern names; give one name per vector");
  std::map<std::string, std::vector<std::size_t>> members;  // sorted names: a deterministic class order
  for (std::size_t i = 0; i < patterns.size(); ++i) members[patterns[i]].push_back(i);
  if (members.size() < 2)
    throw UserError("void_pattern_classifier: the training examples hold " + std::to_string(members.size()) +
                    " pattern(s); a classifier needs examples of at least 2 patterns");
  for (const auto& [name, indices] : members)
    if (indices.size() < 2)
      throw UserError("void_pattern_classifier: pattern '" + name + "' has " + std::to_string(indices.size()) +
                      " training example; every pattern needs at least 2 to estimate its spread");

  VoidPatternClassifier model;
  model.features_ = options.features;
  const auto n = static_cast<Index>(examples.size()), p = static_cast<Index>(model.features_.size());
  Eigen::MatrixXd x(n, p);
  for (Index i = 0; i < n; ++i) {
    x.row(i) = selected(examples[static_cast<std::size_t>(i)], model.features_).transpose();
    for (Index f = 0; f < p; ++f)
      if (!std::isfinite(x(i, f)))
        throw UserError("void_pattern_classifier: example " + std::to_string(i) + " has " +
                        to_string(model.features_[static_cast<std::size_t>(f)]) + " = " + format_number(x(i, f)) +
                        "; every feature must be finite");
  }

  // Standardise, so that the ridge means the same for HU, mm^3 and ratios.
  const Eigen::VectorXd mean = x.colwise().mean().transpose();
  Eigen::VectorXd scale =
      ((x.rowwise() - mean.transpose()).colwise().squaredNorm() / static_cast<double>(n)).transpose().cwiseSqrt();
  for (Index f = 0; f < p; ++f)
    if (!(scale(f) > 0.0)) scale(f) = 1.0;  // a constant feature stays 0 and adds nothing
  const Eigen::MatrixXd z = (x.rowwise() - mean.transpose()).array().rowwise() / scale.transpose().array();

  const auto k = static_cast<Index>(members.size());
  Eigen::MatrixXd class_means(p, k);
  Eigen::VectorXd log_priors(k);
  Eigen::MatrixXd scatter = Eigen::MatrixXd::Zero(p, p);
  Index c = 0;
  for (const auto& [name, indices] : members) {
    model.classes_.push_back(name);
    Eigen::VectorXd centre = Eigen::VectorXd::Zero(p);
    for (std::size_t i : indices) centre += z.row(static_cast<Index>(i)).transpose();
    centre /= static_cast<double>(indices.size());
    for (std::size_t i : indices) {
      const Eigen::VectorXd d = z.row(static_cast<Index>(i)).transpose() - centre;
      scatter += d * d.transpose();
    }
    class_means.col(c) = centre;
    log_priors(c) = std::log(static_cast<double>(indices.size()) / static_cast<double>(n));
    ++c;
  }
  Eigen::MatrixXd covariance = scatter / static_cast<double>(n);
  covariance.diagonal().array() += options.ridge;
  const Eigen::LLT<Eigen::MatrixXd> cholesky(covariance);
  if (cholesky.info() != Eigen::Success || !(cholesky.rcond() > 1e-12))
    throw UserError(
        "void_pattern_classifier: the pooled covariance of the features is singular (features constant "
        "within every pattern or collinear); use a ridge above 0 or fewer features");
  const Eigen::MatrixXd weights = cholesky.solve(class_means);  // column k: S^-1 m_k

  model.mean_.assign(mean.data(), mean.data() + p);
  model.scale_.assign(scale.data(), scale.data() + p);
  for (Index j = 0; j < k; ++j) {
    for (Index f = 0; f < p; ++f) model.weights_.push_back(weights(f, j));
    model.offsets_.push_back(-0.5 * class_means.col(j).dot(weights.col(j)) + log_priors(j));
  }
  return model;
}

std::vector<double> VoidPatternClassifier::discriminants(const VoidPatternFeatures& features) const {
  const std::size_t p = features_.size();
  std::vector<double> scores(classes_.size());
  for (std::size_t k = 0; k < classes_.size(); ++k) {
    double score = offsets_[k];
    for (std::size_t f = 0; f < p; ++f) score += weights_[k * p + f] * (features[features_[f]] - mean_[f]) / scale_[f];
    scores[k] = score;
  }
  return scores;
}

std::vector<double> VoidPatternClassifier::posteriors(const VoidPatternFeatures& features) const {
  std::vector<double> scores = discriminants(features);
  const double top = *std::max_element(scores.begin(), scores.end());  // subtracted so exp cannot overflow
  double total = 0.0;
  for (double& score : scores) total += (score = std::exp(score - top));
  for (double& score : scores) score /= total;
  return scores;
}

std::string VoidPatternClassifier::predict(const VoidPatternFeatures& features) const {
  const std::vector<double> scores = discriminants(features);
  return classes_[static_cast<std::size_t>(std::max_element(scores.begin(), scores.end()) - scores.begin())];
}

}  // namespace frugal::baselines
