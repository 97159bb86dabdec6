// The pictures a cell keeps for the report are exact slices of what the cell saw: the image, the
// truth's lesion voxels, the prediction map, and the bought label drawn where the rater put it.
// Expected values come from the subject and label themselves (no outside source).
#include "experiments/study/example_maps.h"

#include <gtest/gtest.h>

#include <cmath>

#include "corruptors/labeler.h"
#include "phantoms/phantom.h"

namespace frugal::study {
namespace {

ScenarioOptions streaks(int dims) {
  ScenarioOptions s = default_scenario(Family::streaks);
  s.geometry.dims = dims;
  s.geometry.size_2d = {72, 64};  // not square: a transposed picture would not match
  s.geometry.size_3d = {40, 36, 24};
  EXPECT_EQ(s.validate(), "");
  return s;
}

const store::ExampleMap& role(const std::vector<store::ExampleMap>& maps, const std::string& name) {
  for (const store::ExampleMap& map : maps)
    if (map.role == name) return map;
  throw std::runtime_error("no picture " + name);
}

bool has_role(const std::vector<store::ExampleMap>& maps, const std::string& name) {
  for (const store::ExampleMap& map : maps)
    if (map.role == name) return true;
  return false;
}

TEST(ExampleMaps, TestPicturesAreTheReferenceSliceOfImageTruthAndPrediction) {
  for (int dims : {2, 3}) {
    SCOPED_TRACE(dims);
    const Subject subject = generate_subject(streaks(dims), 5, 3);
    const int z = dims == 3 ? subject.truth.reference_slice : 0;
    learn::Prediction prediction;
    prediction.map = subject.image;
    for (float& v : prediction.map.voxels()) v = 0.25F;
    prediction.map.at(7, 9, z) = 0.75F;
    prediction.count = 2.04;
    const auto maps = test_example_maps(subject, prediction, learn::Strategy::mask);
    const store::ExampleMap& image = role(maps, "test_image");
    const store::ExampleMap& truth = role(maps, "test_truth");
    const store::ExampleMap& predicted = role(maps, "prediction");
    const Shape shape = subject.image.shape();
    for (const store::ExampleMap* map : {&image, &truth, &predicted}) {
      EXPECT_EQ(map->width, shape.x);
      EXPECT_EQ(map->height, shape.y);
      ASSERT_EQ(map->pixels.size(), static_cast<std::size_t>(shape.x * shape.y));
      EXPECT_EQ(map->subject, subject.truth.subject);
    }
    int lesion_voxels = 0;
    for (int y = 0; y < shape.y; ++y)
      for (int x = 0; x < shape.x; ++x) {
        const std::size_t i = static_cast<std::size_t>(y * shape.x + x);
        EXPECT_EQ(image.pixels[i], subject.image.at(x, y, z));
        const bool lesion = subject.labels.at(x, y, z) == kLesion;
        lesion_voxels += lesion;
        EXPECT_EQ(truth.pixels[i], lesion ? 1.0F : 0.0F);
        EXPECT_EQ(predicted.pixels[i], x == 7 && y == 9 ? 0.75F : 0.25F);
      }
    EXPECT_GT(lesion_voxels, 0) << "the default scenario draws lesions; the check needs some";
    EXPECT_EQ(image.scale, "grey");
    EXPECT_EQ(truth.scale, "probability");
    EXPECT_EQ(predicted.scale, "probability");
    EXPECT_NE(predicted.caption.find("count 2.0"), std::string::npos) << predicted.caption;
  }
}

TEST(ExampleMaps, ADensityIsShownInGreyAndAScalarStrategyHasNoMapPicture) {
  const Subject subject = generate_subject(streaks(2), 5, 1);
  learn::Prediction density;
  density.map = subject.image;
  const auto density_maps = test_example_maps(subject, density, learn::Strategy::count_map);
  EXPECT_EQ(role(density_maps, "prediction").scale, "grey");
  const auto threshold_maps = test_example_maps(subject, density, learn::Strategy::threshold);
  EXPECT_EQ(role(threshold_maps, "prediction").scale, "probability");  // its 0/1 mask
  EXPECT_FALSE(map_is_probability(learn::Strategy::line_filter));
  EXPECT_FALSE(has_role(test_example_maps(subject, learn::Prediction{}, learn::Strategy::scalar), "prediction"));
}

// The one rule of what a map means, shared by run_cell, the panels and frugal predict
// (learner.h's prediction rules; common practice, no source).
TEST(MapKind, EveryStrategyHasTheMapItsPredictionRuleGives) {
  using learn::Strategy;
  for (Strategy strategy : {Strategy::mask, Strategy::mask_robust, Strategy::partial, Strategy::partial_naive,
                            Strategy::presence_mil, Strategy::points, Strategy::mixed, Strategy::grade_bounds,
                            Strategy::threshold}) {
    EXPECT_EQ(map_kind_of(strategy), scoring::MapKind::probability) << learn::to_string(strategy);
    EXPECT_TRUE(map_is_probability(strategy));
  }
  EXPECT_EQ(map_kind_of(Strategy::count_map), scoring::MapKind::density);
  EXPECT_EQ(map_kind_of(Strategy::line_filter), scoring::MapKind::response);
  EXPECT_EQ(map_kind_of(Strategy::scalar), scoring::MapKind::none);
}

TEST(ExampleMaps, OutlinesAreDrawnVoxelForVoxelAndCountsAreNamedInTheCaption) {
  const Subject subject = generate_subject(streaks(2), 9, 2);
  const RaterOptions rater;
  const Label outline = make_label(subject, rater, {LabelKind::outline, CountScope::image, 0}, 9);
  const auto outline_maps = label_example_maps(subject, outline);
  const store::ExampleMap& drawn = role(outline_maps, "label");
  for (int y = 0; y < subject.image.shape().y; ++y)
    for (int x = 0; x < subject.image.shape().x; ++x)
      EXPECT_EQ(drawn.pixels[static_cast<std::size_t>(y * drawn.width + x)], outline.mask.at(x, y) == 1 ? 1.0F : 0.0F);

  Label count = make_label(subject, rater, {LabelKind::count, CountScope::image, 0}, 9);
  count.value = 4;
  const auto count_maps = label_example_maps(subject, count);
  EXPECT_FALSE(has_role(count_maps, "label"));
  EXPECT_EQ(role(count_maps, "label_image").caption, "count label: 4");
}

TEST(ExampleMaps, ClicksAreMarkedAtTheirVoxel) {
  const Subject subject = generate_subject(streaks(2), 9, 2);
  Label points;
  points.kind = LabelKind::points;
  points.subject = subject.truth.subject;
  // A click at voxel (10, 20) in world millimetres (Geometry::world_mm) and one outside the grid.
  points.clicks.push_back({subject.image.geometry().world_mm(10, 20, 0)});
  points.clicks.push_back({subject.image.geometry().world_mm(-50, 5, 0)});
  const auto maps = label_example_maps(subject, points);
  const store::ExampleMap& drawn = role(maps, "label");
  double marked = 0.0;
  for (float v : drawn.pixels) marked += v;
  EXPECT_EQ(marked, 9.0);  // a 3 x 3 mark around the click inside the grid, none for the other
  for (int y = 19; y <= 21; ++y)
    for (int x = 9; x <= 11; ++x) EXPECT_EQ(drawn.pixels[static_cast<std::size_t>(y * drawn.width + x)], 1.0F);
}

}  // namespace
}  // namespace frugal::study
