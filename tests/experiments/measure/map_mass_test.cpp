#include "experiments/measure/map_mass.h"

#include <gtest/gtest.h>

#include <cmath>

#include "phantoms/subject.h"
#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

Geometry grid(int x, int y, double spacing_mm) {
  Geometry geometry;
  geometry.shape = {x, y, 1};
  geometry.spacing_mm = {spacing_mm, spacing_mm, 1.0};
  return geometry;
}

// Lattice points within radius r of a lattice point: 1, 5, 13, 29, 49, 81 for r = 0..5 (the Gauss
// circle problem, OEIS A000328; from memory).
TEST(MapMass, NeighbourhoodIsTheDiscOfTheRadiusInMillimetres) {
  const Geometry geometry = grid(30, 30, 0.5);
  LabelImage labels(geometry, kField);
  labels.at(10, 10) = kLesion;
  const FloatImage map(geometry, 1.0F);
  MapMassOptions options;
  for (const auto& [radius_mm, points] : {std::pair{0.0, 1}, {0.5, 5}, {1.0, 13}, {1.5, 29}, {2.0, 49}, {2.5, 81}}) {
    options.radius_mm = radius_mm;
    const MapMass mass = map_mass(map, labels, {1, 0, 0}, options);
    EXPECT_DOUBLE_EQ(mass.on_lesions, points) << radius_mm;
    EXPECT_DOUBLE_EQ(mass.elsewhere, 900.0 - points) << radius_mm;
    EXPECT_DOUBLE_EQ(mass.total, 900.0);
  }
}

// Where neighbourhoods meet, a lesion keeps the mass (the documented order; common practice,
// no source): a dot one voxel from the lesion gets only the voxels nearer to it alone.
TEST(MapMass, LesionsComeFirstWhereNeighbourhoodsMeet) {
  const Geometry geometry = grid(20, 20, 1.0);
  LabelImage labels(geometry, kField);
  labels.at(5, 5) = kLesion;
  labels.at(6, 5) = kDotDistractor;
  labels.at(15, 15) = kLineDistractor;
  labels.at(16, 15) = kLineDistractor;
  const FloatImage map(geometry, 1.0F);
  MapMassOptions options;
  options.radius_mm = 1.0;
  const MapMass mass = map_mass(map, labels, {1, 1, 1}, options);
  EXPECT_DOUBLE_EQ(mass.on_lesions, 5.0);
  EXPECT_DOUBLE_EQ(mass.on_dots, 3.0);   // the dot's disc of 5 less the two voxels near the lesion
  EXPECT_DOUBLE_EQ(mass.on_lines, 8.0);  // two discs of 5 whose centres are neighbours share 2
  EXPECT_DOUBLE_EQ(mass.total, 400.0);
  EXPECT_DOUBLE_EQ(mass.on_lesions + mass.on_dots + mass.on_lines + mass.elsewhere, mass.total);
}

TEST(MapMass, PerObjectAndSharesPoolOverImages) {
  const Geometry geometry = grid(10, 10, 1.0);
  LabelImage labels(geometry, kField);
  labels.at(2, 2) = kLesion;
  labels.at(7, 7) = kLineDistractor;
  FloatImage map(geometry, 0.0F);
  map.at(2, 2) = 3.0F;
  map.at(7, 7) = 1.0F;
  map.at(0, 9) = 1.0F;
  MapMassOptions options;
  options.radius_mm = 0.0;
  MapMass pooled = map_mass(map, labels, {2, 0, 1}, options);  // two lesions drawn on one voxel
  pooled += map_mass(map, labels, {2, 0, 1}, options);
  EXPECT_DOUBLE_EQ(pooled.per_lesion(), 6.0 / 4.0);
  EXPECT_DOUBLE_EQ(pooled.per_line(), 2.0 / 2.0);
  EXPECT_TRUE(std::isnan(pooled.per_dot()));
  EXPECT_DOUBLE_EQ(pooled.share_on_lesions(), 0.6);
  EXPECT_DOUBLE_EQ(pooled.share_elsewhere(), 0.2);
}

TEST(MapMass, RefusesMismatchedGridsAndBadRadius) {
  const LabelImage labels(grid(10, 10, 1.0), kField);
  const FloatImage map(grid(10, 12, 1.0), 0.0F);
  EXPECT_THROW(map_mass(map, labels, {}), UserError);
  MapMassOptions options;
  options.radius_mm = -1.0;
  EXPECT_NE(options.validate().find("radius_mm = -1"), std::string::npos);
  EXPECT_THROW(map_mass(FloatImage(grid(10, 10, 1.0)), labels, {}, options), UserError);
}

}  // namespace
}  // namespace frugal::measure
