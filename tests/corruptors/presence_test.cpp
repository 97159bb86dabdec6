#include "corruptors/presence.h"

#include <gtest/gtest.h>

#include "phantoms/phantom.h"

namespace frugal {
namespace {

RandomStream stream_for(std::uint64_t seed, int subject) {
  return RandomStream(seed, static_cast<std::uint64_t>(subject), StreamPurpose::rater, 0);
}

// A rater who notices every lesion and no look-alike calls a lesion present exactly when the
// truth has one (the detection curve with p == 1.0, see count_test.cpp).
TEST(MakePresence, ExactRaterAgreesWithTruth) {
  ScenarioOptions scenario = default_scenario(Family::streaks);
  scenario.geometry.size_2d = {64, 64};
  scenario.streaks.count = {CountDistribution::Kind::poisson, 1.0};  // many subjects without lesions
  RaterOptions rater;
  rater.detection = {0.01, 50.0, 0.2, 0.0, 0.0, 0.0, 0.0};
  int absent = 0;
  for (int subject = 0; subject < 60; ++subject) {
    const Subject s = generate_subject(scenario, 6, subject);
    RandomStream random = stream_for(6, subject);
    const Label label = make_presence(s, rater, random);
    EXPECT_EQ(label.value, s.truth.count > 0 ? 1.0 : 0.0) << "seed 6 subject " << subject;
    EXPECT_EQ(label.cost_seconds, rater.cost.presence_per_image_s);
    absent += s.truth.count == 0;
  }
  EXPECT_GT(absent, 5);  // Poisson(1): about 37% of subjects have no lesion
}

// A rater who takes every dot for a lesion calls a subject with dots present even without lesions.
TEST(MakePresence, LookAlikesCanMakeAFalsePositive) {
  ScenarioOptions scenario = default_scenario(Family::streaks);
  scenario.geometry.size_2d = {64, 64};
  scenario.streaks.count = {CountDistribution::Kind::fixed, 0.0, 2.0, 0};
  scenario.streaks.dots = {CountDistribution::Kind::fixed, 0.0, 2.0, 2};
  RaterOptions rater;
  rater.detection.dot_confusion = 1.0;
  const Subject s = generate_subject(scenario, 6, 0);
  RandomStream random = stream_for(6, 0);
  EXPECT_EQ(make_presence(s, rater, random).value, 1.0);
}

// Voids: present when the perceived extent is above the "none" grade; with the default first
// edge 0 that is any subject whose true fraction is above 0 (grade.h).
TEST(MakePresence, VoidsFollowThePerceivedExtent) {
  ScenarioOptions scenario = default_scenario(Family::voids);
  scenario.geometry.size_2d = {64, 64};
  scenario.voids.target = Distribution::uniform_between(0.0, 0.05);
  const RaterOptions rater;
  for (int subject = 0; subject < 20; ++subject) {
    const Subject s = generate_subject(scenario, 7, subject);
    RandomStream random = stream_for(7, subject);
    EXPECT_EQ(make_presence(s, rater, random).value, s.truth.affected_fraction > 0.0 ? 1.0 : 0.0);
  }
  RaterOptions strict = rater;
  strict.grading.bin_edges = {0.5, 0.8};  // "present" only above half the field
  strict.grading.perception_sd = 0.0;
  const Subject s = generate_subject(scenario, 7, 0);
  RandomStream random = stream_for(7, 0);
  EXPECT_EQ(make_presence(s, strict, random).value, 0.0);
}

}  // namespace
}  // namespace frugal
