#include "corruptors/count.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>

#include "phantoms/phantom.h"
#include "phantoms/user_error.h"

namespace frugal {
namespace {

// Small, faint lesions that the default rater often misses.
ScenarioOptions small_lesions(int dims) {
  ScenarioOptions s = default_scenario(Family::streaks);
  s.geometry.dims = dims;
  s.geometry.size_2d = {96, 96};
  s.geometry.size_3d = {48, 48, 24};
  s.streaks.count = {CountDistribution::Kind::poisson, 8.0};
  s.streaks.length_mm = Distribution::uniform_between(1.0, 4.0);
  s.streaks.width_mm = Distribution::uniform_between(0.6, 1.0);
  s.streaks.contrast = Distribution::uniform_between(0.15, 0.4);
  return s;
}

// A rater who notices every lesion and no look-alike and never slips: counts equal truth.
RaterOptions exact_rater() {
  RaterOptions rater;
  rater.detection.size50_mm = 0.01;
  rater.detection.size_slope = 50.0;  // p = 1 / (1 + exp(-50 ln(L / 0.01))) == 1.0 in double for L > 0.5 mm
  rater.detection.contrast_slope = 0.0;
  rater.detection.lapse = 0.0;
  rater.detection.dot_confusion = 0.0;
  rater.detection.line_confusion = 0.0;
  rater.counting.slip_probability = 0.0;
  return rater;
}

RandomStream stream_for(std::uint64_t seed, int subject) {
  return RandomStream(seed, static_cast<std::uint64_t>(subject), StreamPurpose::rater, 1);
}

// Counts are biased low when small lesions are hard to see, by the amount the configured curve
// predicts: E[count] = sum of p(length, contrast) over the lesions (no look-alikes, no slips), with
// variance sum p (1 - p) (independent Bernoulli draws); tolerance 4 SD.
TEST(MakeCount, BiasedLowByWhatTheCurvePredicts) {
  const ScenarioOptions scenario = small_lesions(2);
  RaterOptions rater;
  rater.detection.dot_confusion = 0.0;
  rater.detection.line_confusion = 0.0;
  rater.counting.slip_probability = 0.0;
  const std::uint64_t seed = 31;
  double truth_total = 0.0, label_total = 0.0, expected = 0.0, variance = 0.0;
  const int subjects = 300;
  for (int subject = 0; subject < subjects; ++subject) {
    const Subject s = generate_subject(scenario, seed, subject);
    RandomStream random = stream_for(seed, subject);
    const Label label = make_count(s, rater, CountScope::image, random);
    truth_total += s.truth.count;
    label_total += label.value;
    for (const ObjectRecord& object : s.truth.objects) {
      if (object.kind != ObjectKind::lesion) continue;
      const double p = rater.detection.probability(object.length_mm, object.contrast);  // the configured curve
      expected += p;
      variance += p * (1.0 - p);
    }
  }
  const double sd = std::sqrt(variance);
  // The scenario must make the bias visible: the predicted shortfall is many SDs.
  ASSERT_GT(truth_total - expected, 10.0 * sd);
  EXPECT_NEAR(label_total, expected, 4.0 * sd) << "seed " << seed;
  EXPECT_LT(label_total / subjects, truth_total / subjects - 4.0 * sd / subjects) << "seed " << seed;
}

TEST(MakeCount, ExactRaterCountsTruthInEveryScope) {
  const ScenarioOptions scenario = small_lesions(3);
  const RaterOptions rater = exact_rater();
  const std::uint64_t seed = 8;
  for (int subject = 0; subject < 20; ++subject) {
    const Subject s = generate_subject(scenario, seed, subject);
    const auto count = [&](CountScope scope) {
      RandomStream random = stream_for(seed, subject);
      return make_count(s, rater, scope, random).value;
    };
    int left = 0;
    for (const ObjectRecord& object : s.truth.objects)
      left += object.kind == ObjectKind::lesion && object.centre_mm[0] < 0.0;
    EXPECT_EQ(count(CountScope::image), s.truth.count) << "seed 8 subject " << subject;
    EXPECT_EQ(count(CountScope::reference_slice), s.truth.count_reference_slice) << "seed 8 subject " << subject;
    EXPECT_EQ(count(CountScope::left_half), left) << "seed 8 subject " << subject;
    EXPECT_EQ(count(CountScope::left_half) + count(CountScope::right_half), s.truth.count);
  }
}

TEST(MakeCount, LookAlikesTakenForLesionsAreCounted) {
  const ScenarioOptions scenario = small_lesions(2);
  RaterOptions rater = exact_rater();
  rater.detection.dot_confusion = 1.0;  // every dot, no line
  for (int subject = 0; subject < 10; ++subject) {
    const Subject s = generate_subject(scenario, 4, subject);
    int dots = 0;
    for (const ObjectRecord& object : s.truth.objects) dots += object.kind == ObjectKind::dot_distractor;
    RandomStream random = stream_for(4, subject);
    EXPECT_EQ(make_count(s, rater, CountScope::image, random).value, s.truth.count + dots)
        << "seed 4 subject " << subject;
  }
}

// Slips change the tally by at most one, never below zero, at the configured rate: with the same
// stream, the slip draws come after the noticing draws, so the tallies with and without slips
// differ only by the slip. A label differs with probability s, or s / 2 when the tally is 0 (a slip
// down is clamped); tolerance 4 binomial SD.
TEST(MakeCount, SlipsChangeTheTallyByAtMostOne) {
  const ScenarioOptions scenario = small_lesions(2);
  RaterOptions steady;
  steady.counting.slip_probability = 0.0;
  RaterOptions slipping = steady;
  slipping.counting.slip_probability = 0.3;
  const std::uint64_t seed = 12;
  double differing = 0.0, expected = 0.0, variance = 0.0;
  for (int subject = 0; subject < 400; ++subject) {
    const Subject s = generate_subject(scenario, seed, subject);
    RandomStream a = stream_for(seed, subject);
    RandomStream b = stream_for(seed, subject);
    const double without = make_count(s, steady, CountScope::image, a).value;
    const double with = make_count(s, slipping, CountScope::image, b).value;
    EXPECT_LE(std::abs(with - without), 1.0) << "seed " << seed << " subject " << subject;
    EXPECT_GE(with, 0.0);
    differing += with != without;
    const double q = without == 0.0 ? 0.15 : 0.3;
    expected += q;
    variance += q * (1.0 - q);
  }
  EXPECT_NEAR(differing, expected, 4.0 * std::sqrt(variance)) << "seed " << seed;
}

// "More than N": the value is the cap and `capped` is set when the tally exceeds it; the cost
// counts one lesion past the cap (the rater stops there).
TEST(MakeCount, CapAndCost) {
  const ScenarioOptions scenario = small_lesions(2);
  RaterOptions rater = exact_rater();
  rater.counting.cap = 3;
  int capped = 0;
  for (int subject = 0; subject < 30; ++subject) {
    const Subject s = generate_subject(scenario, 2, subject);
    RandomStream random = stream_for(2, subject);
    const Label label = make_count(s, rater, CountScope::image, random);
    EXPECT_EQ(label.kind, LabelKind::count);
    EXPECT_EQ(label.capped, s.truth.count > 3) << "subject " << subject;
    EXPECT_EQ(label.value, std::min(s.truth.count, 3));
    const int counted = label.capped ? 4 : s.truth.count;
    EXPECT_DOUBLE_EQ(label.cost_seconds, rater.cost.count_per_image_s + rater.cost.count_per_lesion_s * counted);
    capped += label.capped;
  }
  EXPECT_GT(capped, 0);  // Poisson(8) lesions: most subjects exceed 3
}

TEST(MakeCount, SameStreamSameLabelAndVoidsAreRefused) {
  const Subject s = generate_subject(small_lesions(2), 5, 1);
  const RaterOptions rater;
  RandomStream a = stream_for(5, 1);
  RandomStream b = stream_for(5, 1);
  EXPECT_EQ(make_count(s, rater, CountScope::image, a).value, make_count(s, rater, CountScope::image, b).value);
  ScenarioOptions voids = default_scenario(Family::voids);
  voids.geometry.size_2d = {64, 64};
  const Subject lungs = generate_subject(voids, 5, 1);
  RandomStream c = stream_for(5, 1);
  EXPECT_THROW(make_count(lungs, rater, CountScope::image, c), UserError);
}

}  // namespace
}  // namespace frugal
