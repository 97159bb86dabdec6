#include "experiments/validate/pattern_check.h"

#include <string>
#include <vector>

#include "experiments/baselines/lung_field.h"
#include "experiments/baselines/void_pattern_classifier.h"
#include "phantoms/phantom.h"

namespace frugal::validation {
namespace {

// At 128² (the default 2D size) confluent spaces and scattered holes differ in size by several
// voxels; at 64² they overlap, so this phenomenon keeps the family's default image size.
constexpr int kPatternSide = 128;

struct PatternSet {
  std::vector<baselines::VoidPatternFeatures> features;
  std::vector<std::string> patterns;
  double densitometry = 0.0;  // mean drawn densitometry, to show it is matched
};

// Features come from the image and its estimated lung field alone; the pattern is the label.
PatternSet draw(const ScenarioOptions& scenario, std::uint64_t seed, int first, int count) {
  PatternSet set;
  for (int i = first; i < first + count; ++i) {
    const Subject subject = generate_subject(scenario, seed, i);
    set.features.push_back(
        baselines::void_pattern_features(subject.image, baselines::lung_field_from_image(subject.image)));
    set.patterns.push_back(subject.truth.pattern);
    set.densitometry += subject.truth.densitometry / count;
  }
  return set;
}

double accuracy(const baselines::VoidPatternClassifier& classifier, const PatternSet& test) {
  int right = 0;
  for (std::size_t i = 0; i < test.features.size(); ++i) right += classifier.predict(test.features[i]) == test.patterns[i];
  return static_cast<double>(right) / static_cast<double>(test.features.size());
}

}  // namespace

RepeatOutcome pattern_separability(const CellContext& context, int repeat) {
  ScenarioOptions scenario = voids_scenario(kPatternSide);
  scenario.name = "validate-voids-matched";
  scenario.voids.target_kind = VoidsTarget::densitometry;  // the same densitometry for every pattern
  if (context.progress) context.progress("pattern classifier");
  const int base = repeat * study::kRepeatStride;
  const PatternSet train = draw(scenario, context.seed, base, context.sizes.pattern_train);
  const PatternSet test = draw(scenario, context.seed, base + study::kTestOffset, context.sizes.pattern_test);
  const auto texture = baselines::VoidPatternClassifier::fit(train.features, train.patterns);
  baselines::VoidPatternClassifierOptions densitometry_only;
  densitometry_only.features = {baselines::VoidPatternFeature::below_threshold_fraction};
  const auto densitometry = baselines::VoidPatternClassifier::fit(train.features, train.patterns, densitometry_only);
  const double texture_accuracy = accuracy(texture, test);
  const double densitometry_accuracy = accuracy(densitometry, test);
  return {{texture_accuracy - densitometry_accuracy},
          {{"texture classifier accuracy", texture_accuracy},
           {"densitometry-only accuracy", densitometry_accuracy},
           {"mean densitometry of the test subjects", test.densitometry}}};
}

}  // namespace frugal::validation
