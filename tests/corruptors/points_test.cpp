#include "corruptors/points.h"

#include <gtest/gtest.h>

#include <cmath>

#include "corruptors/detection.h"
#include "phantoms/phantom.h"
#include "phantoms/user_error.h"

namespace frugal {
namespace {

ScenarioOptions scenario(int dims) {
  ScenarioOptions s = default_scenario(Family::streaks);
  s.geometry.dims = dims;
  s.geometry.size_2d = {96, 96};
  s.geometry.size_3d = {40, 40, 32};
  return s;
}

RandomStream stream_for(std::uint64_t seed, int subject) {
  return RandomStream(seed, static_cast<std::uint64_t>(subject), StreamPurpose::rater, 3);
}

// One click per noticed object, in object order: the noticing draws come first in the label's
// stream, so notice_objects() on an identical stream shows which objects were noticed. The
// per-axis click error has SD jitter_mm (configured) and mean 0; tolerances 4 SE (mean:
// sd / sqrt(n); SD: sd / sqrt(2n)). In 2D the clicks stay in the image plane.
TEST(MakePoints, OneJitteredClickPerNoticedObject) {
  for (int dims : {2, 3}) {
    RaterOptions rater;
    rater.clicks.jitter_mm = 1.5;
    const std::uint64_t seed = 44;
    std::array<double, 3> sum{}, sum_squares{};
    int clicks = 0;
    for (int subject = 0; subject < 150; ++subject) {
      const Subject s = generate_subject(scenario(dims), seed, subject);
      RandomStream random = stream_for(seed, subject);
      RandomStream replay = stream_for(seed, subject);
      const Label label = make_points(s, rater, random);
      const std::vector<bool> noticed = notice_objects(s.truth, rater.detection, replay);
      std::size_t click = 0;
      for (std::size_t n = 0; n < noticed.size(); ++n) {
        if (!noticed[n]) continue;
        ASSERT_LT(click, label.clicks.size()) << "seed " << seed << " subject " << subject;
        for (std::size_t axis = 0; axis < 3; ++axis) {
          const double error = label.clicks[click].position_mm[axis] - s.truth.objects[n].centre_mm[axis];
          sum[axis] += error;
          sum_squares[axis] += error * error;
        }
        ++click;
      }
      EXPECT_EQ(label.clicks.size(), click) << "seed " << seed << " subject " << subject;
      EXPECT_DOUBLE_EQ(
          label.cost_seconds,
          rater.cost.points_per_image_s + rater.cost.points_per_click_s * static_cast<double>(label.clicks.size()));
      clicks += static_cast<int>(click);
    }
    ASSERT_GT(clicks, 500);
    for (std::size_t axis = 0; axis < 3; ++axis) {
      const double mean = sum[axis] / clicks;
      const double sd = std::sqrt(sum_squares[axis] / clicks - mean * mean);
      if (dims == 2 && axis == 2) {
        EXPECT_EQ(sd, 0.0);  // z stays in the plane
        EXPECT_EQ(mean, 0.0);
        continue;
      }
      EXPECT_NEAR(mean, 0.0, 4.0 * 1.5 / std::sqrt(clicks)) << "dims " << dims << " axis " << axis;
      EXPECT_NEAR(sd, 1.5, 4.0 * 1.5 / std::sqrt(2.0 * clicks)) << "dims " << dims << " axis " << axis;
    }
  }
}

TEST(MakePoints, NoJitterClicksTheCentres) {
  RaterOptions rater;
  rater.clicks.jitter_mm = 0.0;
  rater.detection.lapse = 0.0;
  const Subject s = generate_subject(scenario(2), 2, 0);
  RandomStream random = stream_for(2, 0);
  for (const Click& click : make_points(s, rater, random).clicks) {
    bool at_a_centre = false;
    for (const ObjectRecord& object : s.truth.objects) at_a_centre |= click.position_mm == object.centre_mm;
    EXPECT_TRUE(at_a_centre);
  }
}

TEST(MakePoints, VoidsAreRefused) {
  ScenarioOptions voids = default_scenario(Family::voids);
  voids.geometry.size_2d = {64, 64};
  const Subject lungs = generate_subject(voids, 5, 0);
  RandomStream random = stream_for(5, 0);
  EXPECT_THROW(make_points(lungs, RaterOptions{}, random), UserError);
}

}  // namespace
}  // namespace frugal
