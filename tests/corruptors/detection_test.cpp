#include "corruptors/detection.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "phantoms/user_error.h"

namespace frugal {
namespace {

constexpr int kObjectsPerBin = 20000;

SubjectTruth objects_of(ObjectKind kind, double length_mm, double contrast, int count) {
  SubjectTruth truth;
  for (int n = 0; n < count; ++n) {
    ObjectRecord object;
    object.id = n + 1;
    object.kind = kind;
    object.length_mm = length_mm;
    object.width_mm = std::min(1.0, length_mm);
    object.contrast = contrast;
    truth.objects.push_back(object);
  }
  return truth;
}

double noticed_share(const SubjectTruth& truth, const DetectionOptions& detection, std::uint64_t seed) {
  RandomStream random(seed, 0, StreamPurpose::rater, 0);
  const std::vector<bool> noticed = notice_objects(truth, detection, random);
  EXPECT_EQ(noticed.size(), truth.objects.size());
  int hits = 0;
  for (bool n : noticed) hits += n ? 1 : 0;
  return static_cast<double>(hits) / static_cast<double>(noticed.size());
}

// Detection rate vs size follows the configured logistic curve (rater.h) within binomial
// sampling error: 20,000 objects per size bin, tolerance 4 binomial SE, sqrt(p (1 - p) / n).
TEST(NoticeObjects, RateFollowsTheConfiguredCurve) {
  DetectionOptions detection;  // defaults: size50 3 mm, slope 3, contrast50 0.2, lapse 0.02
  const std::uint64_t seed = 101;
  for (double contrast : {0.1, 0.2, 0.5}) {
    for (double length : {0.5, 1.0, 2.0, 3.0, 4.5, 7.0, 12.0}) {
      const double expected = detection.probability(length, contrast);  // the configured curve
      const double observed = noticed_share(objects_of(ObjectKind::lesion, length, contrast, kObjectsPerBin), detection,
                                            seed + static_cast<std::uint64_t>(length * 10 + contrast * 1000));
      const double se = std::sqrt(expected * (1.0 - expected) / kObjectsPerBin);  // binomial SE
      EXPECT_NEAR(observed, expected, 4.0 * se + 1e-12)
          << "length " << length << " contrast " << contrast << " seed " << seed;
    }
  }
}

// A steeper curve from a rater file: the same check at a different size50 and slope.
TEST(NoticeObjects, RateFollowsAConfiguredSteepCurve) {
  DetectionOptions detection;
  detection.size50_mm = 5.0;
  detection.size_slope = 6.0;
  detection.lapse = 0.1;
  for (double length : {2.0, 4.0, 5.0, 6.0, 10.0}) {
    const double expected = detection.probability(length, 0.2);  // the configured curve
    const double observed = noticed_share(objects_of(ObjectKind::lesion, length, 0.2, kObjectsPerBin), detection, 7);
    const double se = std::sqrt(expected * (1.0 - expected) / kObjectsPerBin);  // binomial SE
    EXPECT_NEAR(observed, expected, 4.0 * se) << "length " << length << " seed 7";
  }
}

// Look-alikes are taken for lesions with the configured confusion probabilities, whatever their size.
TEST(NoticeObjects, LookAlikesAtTheirConfusionRates) {
  DetectionOptions detection;
  detection.dot_confusion = 0.15;
  detection.line_confusion = 0.04;
  for (const auto& [kind, expected] :
       {std::pair{ObjectKind::dot_distractor, 0.15}, std::pair{ObjectKind::line_distractor, 0.04}}) {
    const double observed = noticed_share(objects_of(kind, 30.0, 0.9, kObjectsPerBin), detection, 5);
    EXPECT_NEAR(observed, expected, 4.0 * std::sqrt(expected * (1.0 - expected) / kObjectsPerBin))  // binomial SE
        << to_string(kind) << " seed 5";
  }
  detection.dot_confusion = 0.0;
  detection.line_confusion = 0.0;
  EXPECT_EQ(noticed_share(objects_of(ObjectKind::dot_distractor, 2.0, 0.5, 1000), detection, 5), 0.0);
}

// Each object uses exactly one draw, so raising one object's probability never changes
// whether another is noticed (what calibration with common random numbers relies on).
TEST(NoticeObjects, OneDrawPerObject) {
  SubjectTruth truth = objects_of(ObjectKind::lesion, 3.0, 0.3, 200);
  for (std::size_t n = 0; n < truth.objects.size(); n += 3) truth.objects[n].kind = ObjectKind::dot_distractor;
  DetectionOptions detection;
  RandomStream first(9, 0, StreamPurpose::rater, 0);
  const std::vector<bool> before = notice_objects(truth, detection, first);
  detection.dot_confusion = 0.9;
  RandomStream second(9, 0, StreamPurpose::rater, 0);
  const std::vector<bool> after = notice_objects(truth, detection, second);
  for (std::size_t n = 0; n < truth.objects.size(); ++n) {
    if (truth.objects[n].kind == ObjectKind::lesion) {
      EXPECT_EQ(before[n], after[n]) << n;
    }
  }
  EXPECT_EQ(first.next_u64(), second.next_u64());
}

TEST(RequireLesionObjects, VoidsHaveNoneToCount) {
  SubjectTruth truth;
  truth.family = Family::voids;
  EXPECT_THROW(require_lesion_objects(truth, LabelKind::count), UserError);
  truth.family = Family::streaks;
  EXPECT_NO_THROW(require_lesion_objects(truth, LabelKind::points));
}

}  // namespace
}  // namespace frugal
