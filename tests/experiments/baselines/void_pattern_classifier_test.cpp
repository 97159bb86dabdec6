#include "experiments/baselines/void_pattern_classifier.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <map>
#include <string>
#include <vector>

#include "experiments/baselines/lung_field.h"
#include "experiments/baselines/void_pattern_features.h"
#include "phantoms/image_ops.h"
#include "phantoms/phantom.h"
#include "phantoms/scenario.h"
#include "phantoms/user_error.h"

namespace frugal::baselines {
namespace {

using Feature = VoidPatternFeature;

// A two-feature vector in the slots of outer_band_enrichment and local_fraction_cv; the unused
// slots hold NaN, so a classifier fitted on the pair must never read them.
VoidPatternFeatures two_features(double first, double second) {
  VoidPatternFeatures features;
  features.values.fill(std::numeric_limits<double>::quiet_NaN());
  features[Feature::outer_band_enrichment] = first;
  features[Feature::local_fraction_cv] = second;
  return features;
}

VoidPatternClassifierOptions pair_options(double ridge) {
  VoidPatternClassifierOptions options;
  options.features = {Feature::outer_band_enrichment, Feature::local_fraction_cv};
  options.ridge = ridge;
  return options;
}

// Three classes of unequal size in two features, so that the priors matter.
struct Textbook {
  std::vector<VoidPatternFeatures> examples;
  std::vector<std::string> names;
};
Textbook textbook() {
  const double points[13][2] = {{1, 2}, {2, 3}, {3, 3}, {2, 1}, {6, 5}, {7, 7}, {8, 6},
                                {7, 5}, {6, 7}, {2, 7}, {3, 8}, {1, 8}, {4, 9}};
  Textbook data;
  for (int i = 0; i < 13; ++i) {
    data.examples.push_back(two_features(points[i][0], points[i][1]));
    data.names.push_back(i < 4 ? "a" : (i < 9 ? "b" : "c"));
  }
  return data;
}

// Expected values: scikit-learn 1.2.1 (Debian python3-sklearn) rerun here,
// LinearDiscriminantAnalysis(solver='lsqr', shrinkage=None).fit(X, y) on the same 13 points, then
// predict, predict_proba and decision_function (given relative to class a, since LDA's
// discriminants are defined up to a shift common to all classes). Ridge 0 is that model exactly;
// standardising the features does not change it (LDA is affine invariant).
TEST(VoidPatternClassifier, MatchesScikitLearnLdaOnATextbookCase) {
  const Textbook data = textbook();
  const VoidPatternClassifier model = VoidPatternClassifier::fit(data.examples, data.names, pair_options(0.0));
  ASSERT_EQ(model.classes(), (std::vector<std::string>{"a", "b", "c"}));
  const double queries[5][2] = {{4, 4}, {5, 6}, {2, 5}, {6, 3}, {3, 6}};
  const char* predicted[5] = {"a", "b", "a", "b", "c"};
  const double posterior[5][3] = {{0.9116094001582099, 0.08839002015895117, 5.796828389922343e-07},
                                  {2.9046108764572255e-05, 0.9997260246848414, 0.0002449292063938636},
                                  {0.649282551840474, 8.300496021825078e-05, 0.3506344431993078},
                                  {0.013415770071521279, 0.9865842299284687, 1.0045187817829967e-14},
                                  {0.0015083865565917373, 0.0015534130588927913, 0.9969382003845154}};
  const double relative[5][2] = {{-2.3334525398910007, -14.26824104234529},
                                 {10.44635202036958, 2.1320846905537465},
                                 {-8.964722898197193, -0.6161237785016365},
                                 {4.297817818415181, -27.92035830618893},
                                 {0.02941390962039314, 6.493648208469045}};
  for (int q = 0; q < 5; ++q) {
    const VoidPatternFeatures x = two_features(queries[q][0], queries[q][1]);
    EXPECT_EQ(model.predict(x), predicted[q]) << "query " << q;
    const std::vector<double> p = model.posteriors(x), d = model.discriminants(x);
    for (int k = 0; k < 3; ++k) EXPECT_NEAR(p[k], posterior[q][k], 1e-9) << "query " << q << " class " << k;
    // Relative tolerance 1e-9: double-precision round-off over a 2 x 2 solve (common practice, no source).
    for (int k = 1; k < 3; ++k)
      EXPECT_NEAR(d[k] - d[0], relative[q][k - 1], 1e-9 * std::abs(relative[q][k - 1])) << "query " << q;
  }
}

// The ridge only steadies the covariance: at the default it moves these posteriors by under 0.01
// (the standardised pooled within-class variances here are 0.13 and 0.11; tolerance common practice, no
// source).
TEST(VoidPatternClassifier, DefaultRidgeBarelyMovesTheTextbookAnswer) {
  const Textbook data = textbook();
  const VoidPatternClassifier exact = VoidPatternClassifier::fit(data.examples, data.names, pair_options(0.0));
  const VoidPatternClassifier ridged = VoidPatternClassifier::fit(data.examples, data.names, pair_options(1e-3));
  for (double x = 0.0; x <= 9.0; x += 1.5)
    for (double y = 0.0; y <= 10.0; y += 1.5) {
      const std::vector<double> p = exact.posteriors(two_features(x, y)), r = ridged.posteriors(two_features(x, y));
      for (std::size_t k = 0; k < p.size(); ++k) EXPECT_NEAR(p[k], r[k], 0.01) << x << ", " << y;
    }
}

TEST(VoidPatternClassifier, RefusesTooFewClassesOrExamples) {
  const Textbook data = textbook();
  const auto message_of = [](const std::vector<VoidPatternFeatures>& x, const std::vector<std::string>& y,
                             const VoidPatternClassifierOptions& options) {
    try {
      VoidPatternClassifier::fit(x, y, options);
    } catch (const UserError& error) {
      return std::string(error.what());
    }
    return std::string("accepted");
  };
  const std::vector<VoidPatternFeatures> four(data.examples.begin(), data.examples.begin() + 4);
  EXPECT_NE(message_of(four, {"a", "a", "a", "a"}, pair_options(0.0)).find("at least 2 patterns"), std::string::npos);
  std::vector<std::string> lonely = data.names;
  lonely[12] = "d";
  const std::string single = message_of(data.examples, lonely, pair_options(0.0));
  EXPECT_NE(single.find("'d' has 1 training example"), std::string::npos) << single;
  EXPECT_NE(message_of(four, {"a", "b"}, pair_options(0.0)).find("one name per vector"), std::string::npos);
  VoidPatternClassifierOptions twice = pair_options(0.0);
  twice.features.push_back(Feature::local_fraction_cv);
  EXPECT_NE(message_of(data.examples, data.names, twice).find("listed twice"), std::string::npos);
  // The pair's slots are finite, every other slot is NaN: fitting on all features must refuse.
  EXPECT_NE(message_of(data.examples, data.names, {}).find("must be finite"), std::string::npos);
}

// A 10^3 grid of 1 x 1 x 2 mm voxels: field = the inner 8^3, soft tissue around it, three dark
// objects (a 3^3 cube, one voxel, the field's x = 8 face). Expected values: NumPy 1.24.2 and SciPy
// 1.10.1 rerun here (ndimage.label with a full 3^3 structure, distance_transform_edt with
// sampling (2, 1, 1), np.percentile's default linear method, 4 x 4 x 2-voxel tiles for 4 mm).
TEST(VoidPatternFeatures, MatchNumpyAndScipyIn3dWithAnisotropicVoxels) {
  const Geometry geometry = centred_geometry({10, 10, 10}, {1.0, 1.0, 2.0});
  FloatImage image(geometry, 40.0F);
  LabelImage field(geometry, 0);
  for (int z = 1; z <= 8; ++z)
    for (int y = 1; y <= 8; ++y)
      for (int x = 1; x <= 8; ++x) {
        field.at(x, y, z) = 1;
        image.at(x, y, z) = x == 8 ? -970.0F : -850.0F;
      }
  for (int z = 2; z <= 4; ++z)
    for (int y = 2; y <= 4; ++y)
      for (int x = 2; x <= 4; ++x) image.at(x, y, z) = -1000.0F;
  image.at(6, 6, 6) = -990.0F;
  VoidPatternFeatureOptions options;
  options.window_mm = 4.0;
  const VoidPatternFeatures f = void_pattern_features(image, field, options);
  EXPECT_NEAR(f[Feature::below_threshold_fraction], 0.1796875, 1e-15);
  EXPECT_NEAR(f[Feature::percentile15_hu], -970.0, 1e-12);
  EXPECT_NEAR(f[Feature::log_component_volume_mm3], 4.653131849695882, 1e-12);
  EXPECT_NEAR(f[Feature::outer_band_enrichment], 1.5900621118012421, 1e-12);
  EXPECT_NEAR(f[Feature::local_fraction_cv], 1.6147748532822663, 1e-12);
  EXPECT_NEAR(f[Feature::dark_boundary_share], 0.9891304347826086, 1e-12);
}

// np.percentile(-1000 + 10 * np.arange(100), 15) = -851.5 (NumPy 1.24.2 rerun here).
TEST(VoidPatternFeatures, PercentileInterpolatesLikeNumpy) {
  const Geometry geometry = centred_geometry({10, 10, 1}, {1.0, 1.0, 1.0});
  FloatImage image(geometry);
  for (std::size_t v = 0; v < image.size(); ++v) image.data()[v] = -1000.0F + 10.0F * static_cast<float>(99 - v);
  const VoidPatternFeatures f = void_pattern_features(image, LabelImage(geometry, 1));
  EXPECT_NEAR(f[Feature::percentile15_hu], -851.5, 1e-9);
}

// ---- The phenomenon on phantoms -------------------------------------------------------------

// 2D voids at the default 128 x 128 size: there the confluent spaces (radius 15-35 % of a lung's
// short semi-axis, about 3-8 mm) are clearly larger than the scattered holes (1-2.5 mm); at
// 64 x 64 the two size ranges overlap. Densitometry-matched: every pattern's fraction below
// -950 HU is drawn from the same uniform(0, 0.3).
ScenarioOptions matched_scenario() {
  ScenarioOptions scenario = default_scenario(Family::voids);
  scenario.name = "void-pattern-test";
  scenario.geometry.dims = 2;
  scenario.geometry.size_2d = {128, 128};
  scenario.voids.target_kind = VoidsTarget::densitometry;
  return scenario;
}

struct Cohort {
  std::vector<VoidPatternFeatures> features;  // from the image and its estimated field only
  std::vector<std::string> patterns;          // truth, for fitting and scoring
  std::vector<double> densitometry;           // truth
};

Cohort draw_cohort(const ScenarioOptions& scenario, std::uint64_t seed, int first, int count) {
  Cohort cohort;
  for (int i = first; i < first + count; ++i) {
    const Subject subject = generate_subject(scenario, seed, i);
    cohort.features.push_back(void_pattern_features(subject.image, lung_field_from_image(subject.image)));
    cohort.patterns.push_back(subject.truth.pattern);
    cohort.densitometry.push_back(subject.truth.densitometry);
  }
  return cohort;
}

double held_out_accuracy(const Cohort& train, const Cohort& test, const std::vector<Feature>& used) {
  VoidPatternClassifierOptions options;
  options.features = used;
  const VoidPatternClassifier model = VoidPatternClassifier::fit(train.features, train.patterns, options);
  int right = 0;
  for (std::size_t i = 0; i < test.features.size(); ++i)
    right += model.predict(test.features[i]) == test.patterns[i] ? 1 : 0;
  return static_cast<double>(right) / static_cast<double>(test.features.size());
}

constexpr int kTrainSubjects = 200, kTestSubjects = 200;
constexpr int kFirstTestSubject = 10000;  // far from the training indices: no subject is in both

// Measured here (seeds 20240611, 20241611; 200 training and 200 held-out subjects): all six
// features 0.985, 0.975; the four spatial features alone 0.970, 0.970; densitometry alone
// 0.265, 0.350 and with the 15th percentile 0.270, 0.370. Chance is 0.25; densitometry alone
// answers nearly always the most frequent training pattern, whose test share is 0.26 and 0.325.
// The margins below leave room for other seeds; they are this test's choice (no source).
TEST(VoidPatternClassifier, TellsDensitometryMatchedPatternsApartWhereDensitometryCannot) {
  const ScenarioOptions scenario = matched_scenario();
  const std::vector<Feature> all(all_void_pattern_features().begin(), all_void_pattern_features().end());
  const std::vector<Feature> spatial{Feature::log_component_volume_mm3, Feature::outer_band_enrichment,
                                     Feature::local_fraction_cv, Feature::dark_boundary_share};
  for (std::uint64_t seed : {20240611ULL, 20241611ULL}) {
    SCOPED_TRACE("seed " + std::to_string(seed));
    const Cohort train = draw_cohort(scenario, seed, 0, kTrainSubjects);
    const Cohort test = draw_cohort(scenario, seed, kFirstTestSubject, kTestSubjects);

    // Densitometry really is matched: per-pattern means of the truth over all 400 subjects.
    std::map<std::string, std::pair<double, int>> by_pattern;
    for (const Cohort* cohort : {&train, &test})
      for (std::size_t i = 0; i < cohort->patterns.size(); ++i) {
        by_pattern[cohort->patterns[i]].first += cohort->densitometry[i];
        by_pattern[cohort->patterns[i]].second += 1;
      }
    ASSERT_EQ(by_pattern.size(), 4U);
    double lowest = 1.0, highest = 0.0;
    for (const auto& [name, sum] : by_pattern) {
      const double mean = sum.first / sum.second;
      lowest = std::min(lowest, mean);
      highest = std::max(highest, mean);
    }
    // uniform(0, 0.3) has SD 0.087, so a mean of ~100 subjects has SD ~0.009 and four means spread
    // by up to a few hundredths by chance alone. Measured: 0.152-0.163 (spread 0.011) and
    // 0.143-0.159 (0.015).
    EXPECT_LT(highest - lowest, 0.04) << "lowest " << lowest << ", highest " << highest;

    const double full = held_out_accuracy(train, test, all);
    const double spatial_only = held_out_accuracy(train, test, spatial);
    const double densitometry_only = held_out_accuracy(train, test, {Feature::below_threshold_fraction});
    const double densitometry_indices =
        held_out_accuracy(train, test, {Feature::below_threshold_fraction, Feature::percentile15_hu});
    EXPECT_GE(full, 0.85);
    EXPECT_GE(spatial_only, 0.85);
    EXPECT_LE(densitometry_only, 0.45);
    EXPECT_LE(densitometry_indices, 0.45);
    EXPECT_GE(full - densitometry_only, 0.3);
    std::printf("seed %llu: full %.3f, spatial %.3f, densitometry %.3f, densitometry + percentile15 %.3f\n",
                static_cast<unsigned long long>(seed), full, spatial_only, densitometry_only, densitometry_indices);
  }
}

// The field a baseline uses is found from the image alone; on these phantoms it is the truth's
// field up to the odd partial-volume voxel at the lung border (measured Dice 1.000 at 128^2).
TEST(LungField, FromTheImageMatchesTheTruthField) {
  const ScenarioOptions scenario = matched_scenario();
  for (int i = 0; i < 10; ++i) {
    const Subject subject = generate_subject(scenario, 20240611, i);
    const LabelImage field = lung_field_from_image(subject.image);
    std::size_t both = 0, estimated = 0, truth = 0;
    for (std::size_t v = 0; v < field.size(); ++v) {
      const bool in_estimate = field.data()[v] != 0, in_truth = subject.labels.data()[v] >= kField;
      both += in_estimate && in_truth ? 1 : 0;
      estimated += in_estimate ? 1 : 0;
      truth += in_truth ? 1 : 0;
    }
    EXPECT_GE(2.0 * static_cast<double>(both) / static_cast<double>(estimated + truth), 0.99) << "subject " << i;
  }
}

}  // namespace
}  // namespace frugal::baselines
