#pragma once
// A void-pattern classifier without a network: the features of void_pattern_features.h,
// standardised by the training mean and SD, then linear discriminant analysis with one pooled
// covariance (Hastie, Tibshirani & Friedman, The Elements of Statistical Learning, sec. 4.3).
// Fitting on a subset of the features (densitometry alone, say) gives the comparison that shows
// what the other features add.

#include <string>
#include <vector>

#include "experiments/baselines/void_pattern_features.h"

namespace frugal::baselines {

struct VoidPatternClassifierOptions {
  std::vector<VoidPatternFeature> features{all_void_pattern_features().begin(), all_void_pattern_features().end()};
  // Added to the diagonal of the pooled covariance of the standardised features (unit scale),
  // so that nearly collinear features cannot make it singular. 0 gives plain LDA.
  double ridge = 1e-3;
  std::string validate() const;  // empty when valid
};

class VoidPatternClassifier {
 public:
  // One pattern name per feature vector. Classes are the distinct names in sorted order; priors
  // are their training shares. The pooled covariance is the within-class scatter divided by the
  // number of examples (the maximum-likelihood estimate). Throws UserError for invalid options,
  // unequal lengths, fewer than 2 classes, a class with fewer than 2 examples, a non-finite
  // feature, or a singular covariance (ridge 0 with collinear features).
  static VoidPatternClassifier fit(const std::vector<VoidPatternFeatures>& examples,
                                   const std::vector<std::string>& patterns,
                                   const VoidPatternClassifierOptions& options = {});

  // The class with the largest discriminant; a tie goes to the first in classes().
  std::string predict(const VoidPatternFeatures& features) const;
  // Linear discriminant of each class in the order of classes(): x' S^-1 m_k - m_k' S^-1 m_k / 2
  // + log prior_k on standardised features. Only differences between classes carry meaning.
  std::vector<double> discriminants(const VoidPatternFeatures& features) const;
  // Posterior probability of each class (softmax of the discriminants).
  std::vector<double> posteriors(const VoidPatternFeatures& features) const;

  const std::vector<std::string>& classes() const { return classes_; }
  const std::vector<VoidPatternFeature>& features() const { return features_; }

 private:
  std::vector<std::string> classes_;
  std::vector<VoidPatternFeature> features_;
  std::vector<double> mean_, scale_;  // training mean and SD per used feature (SD 1 for a constant one)
  std::vector<double> weights_;       // row k (features_.size() values): S^-1 m_k
  std::vector<double> offsets_;       // per class: -m_k' S^-1 m_k / 2 + log prior_k
};

}  // namespace frugal::baselines
