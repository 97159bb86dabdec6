#include "phantoms/phantom.h"

#include <gtest/gtest.h>

#include <opencv2/imgproc.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <set>

#include "phantoms/image_views.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/user_error.h"
#include "phantoms/voids.h"

namespace frugal {
namespace {

ScenarioOptions small(Family family, int dims) {
  ScenarioOptions s = default_scenario(family);
  s.geometry.dims = dims;
  s.geometry.size_2d = {96, 96};
  s.geometry.size_3d = {40, 40, 32};
  return s;
}

TEST(Phantom, SameSeedSameSubjectInAnyOrder) {
  for (Family family : {Family::streaks, Family::voids}) {
    const ScenarioOptions s = small(family, 2);
    const Subject later = generate_subject(s, 5, 3);
    generate_subject(s, 5, 0);
    const Subject again = generate_subject(s, 5, 3);
    EXPECT_EQ(later.image.voxels(), again.image.voxels());
    EXPECT_EQ(later.labels.voxels(), again.labels.voxels());
    EXPECT_NE(generate_subject(s, 6, 3).image.voxels(), later.image.voxels());
  }
}

// With lesions kept apart, the truth count equals the 8-connected components of the lesion mask
// (OpenCV cv::connectedComponents, whose count includes the background label 0).
TEST(Phantom, StreaksTruthCountEqualsConnectedComponents) {
  ScenarioOptions s = small(Family::streaks, 2);
  s.streaks.count = {CountDistribution::Kind::poisson, 8.0};
  for (int subject = 0; subject < 40; ++subject) {
    Subject g = generate_subject(s, 9, subject);
    const cv::Mat lesions = slice_view(g.labels) == kLesion;
    cv::Mat components;
    const int found = cv::connectedComponents(lesions, components, 8) - 1;
    EXPECT_EQ(found, g.truth.count) << "seed 9 subject " << subject;
    EXPECT_EQ(g.truth.count_reference_slice, g.truth.count);  // 2D: the only slice
    std::int64_t lesion_voxels = 0, field_voxels = 0;
    for (std::uint8_t code : g.labels.voxels()) {
      lesion_voxels += code == kLesion;
      field_voxels += code >= kField;
    }
    EXPECT_DOUBLE_EQ(g.truth.affected_fraction, static_cast<double>(lesion_voxels) / static_cast<double>(field_voxels));
  }
}

TEST(Phantom, ThreeDimensionalReferenceSliceCount) {
  ScenarioOptions s = small(Family::streaks, 3);
  s.streaks.count = {CountDistribution::Kind::fixed, 0.0, 0.0, 12};
  const Subject g = generate_subject(s, 4, 0);
  const int z = g.truth.reference_slice;
  EXPECT_EQ(z, 16);
  std::set<int> touching;
  int lesions_in_slice = 0;
  for (const ObjectRecord& o : g.truth.objects)
    if (o.kind == ObjectKind::lesion && o.in_reference_slice) ++lesions_in_slice;
  EXPECT_EQ(g.truth.count_reference_slice, lesions_in_slice);
  EXPECT_LE(g.truth.count_reference_slice, g.truth.count);
  // Every lesion voxel in the reference slice belongs to a lesion flagged as touching it.
  const cv::Mat slice = slice_view(g.labels, z) == kLesion;
  cv::Mat components;
  EXPECT_LE(cv::connectedComponents(slice, components, 8) - 1, g.truth.count_reference_slice);
}

// Pearson correlation of a drawn confounder with the count approaches the configured value;
// 1500 subjects give an SE of about (1 - r^2)/sqrt(n) = 0.016 (Fisher, common practice).
TEST(Phantom, ConfounderCorrelatesWithTheTargetAsConfigured) {
  ScenarioOptions s = small(Family::streaks, 2);
  s.geometry.size_2d = {64, 64};
  s.streaks.count = {CountDistribution::Kind::poisson, 4.0};
  s.streaks.dots = {CountDistribution::Kind::fixed, 0.0, 0.0, 0};
  s.streaks.lines = {CountDistribution::Kind::fixed, 0.0, 0.0, 0};
  s.confounder = {ConfounderFactor::global_intensity, 0.6, 0.1};
  const int n = 1500;
  double sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
  int drawn = 0;
  for (int subject = 0; subject < n; ++subject) {
    const Subject g = generate_subject(s, 17, subject);
    const double x = g.truth.count + g.truth.objects_dropped, y = g.truth.confounder;
    drawn += g.truth.objects_dropped;
    sx += x, sy += y, sxx += x * x, syy += y * y, sxy += x * y;
  }
  const double r = (n * sxy - sx * sy) / std::sqrt((n * sxx - sx * sx) * (n * syy - sy * sy));
  EXPECT_NEAR(r, 0.6, 4 * 0.016) << "seed 17, dropped " << drawn;
}

TEST(Phantom, RescanKeepsAnatomyAndLesionsButMovesAndRenoises) {
  for (int dims : {2, 3}) {
    ScenarioOptions s = small(Family::streaks, dims);
    s.streaks.count = {CountDistribution::Kind::fixed, 0.0, 0.0, 6};
    const Subject first = generate_subject(s, 3, 1, 0);
    const Subject second = generate_subject(s, 3, 1, 1);
    ASSERT_EQ(first.truth.objects.size(), second.truth.objects.size());
    EXPECT_EQ(first.truth.count, second.truth.count);
    const double reach = s.rescan.max_shift_mm * std::sqrt(3.0) + s.rescan.max_rotation_deg * M_PI / 180.0 * 70.0;
    for (std::size_t n = 0; n < first.truth.objects.size(); ++n) {
      const ObjectRecord &a = first.truth.objects[n], &b = second.truth.objects[n];
      EXPECT_DOUBLE_EQ(a.length_mm, b.length_mm);
      EXPECT_DOUBLE_EQ(a.volume_mm3, b.volume_mm3);
      EXPECT_LT(std::hypot(a.centre_mm[0] - b.centre_mm[0], a.centre_mm[1] - b.centre_mm[1], a.centre_mm[2] - b.centre_mm[2]),
                reach);
    }
    EXPECT_NE(first.image.voxels(), second.image.voxels());
  }
}

// HU anchors: air -1000 and water 0 by definition of the Hounsfield scale (ICRP 129).
TEST(Phantom, VoidsUseHounsfieldAnchors) {
  ScenarioOptions s = small(Family::voids, 2);
  s.noise.model = NoiseModel::none;
  s.psf_fwhm_mm = 0.0;
  s.voids.body_hu = 0.0;
  const Subject g = generate_subject(s, 2, 0);
  EXPECT_FLOAT_EQ(g.image.at(0, 0), -1000.0F);                 // a corner is outside the body: air
  EXPECT_FLOAT_EQ(g.image.at(g.image.shape().x / 2, 14), 0.0F);  // between body edge and lungs: water
  EXPECT_NEAR(g.image.at(g.image.shape().x / 2, g.image.shape().y / 2), 0.0F, 1e-6);  // mediastinum
}

// Densitometry-matched mode: the fraction of field voxels below -950 HU equals the drawn target
// for every pattern, while the extent of the region differs by pattern.
TEST(Phantom, DensitometryMatchedModeHitsTheTargetForEveryPattern) {
  ScenarioOptions s = small(Family::voids, 2);
  s.voids.target = Distribution::fixed_at(0.15);
  s.voids.target_kind = VoidsTarget::densitometry;
  std::set<long> extents;
  for (VoidPattern pattern : {VoidPattern::scattered_holes, VoidPattern::diffuse_thinning, VoidPattern::confluent_spaces,
                              VoidPattern::peripheral_band}) {
    s.voids.patterns = {pattern};
    const Subject g = generate_subject(s, 8, 0);
    EXPECT_NEAR(g.truth.densitometry, 0.15, 0.006) << to_string(pattern);
    EXPECT_NEAR(densitometry(g.image, g.labels, -950.0), g.truth.densitometry, 1e-12);
    extents.insert(std::lround(g.truth.affected_fraction * 1000));
  }
  EXPECT_GE(extents.size(), 3U) << "patterns should need different extents for the same densitometry";
}

TEST(Phantom, VoidsExtentModeHitsTheAffectedFraction) {
  ScenarioOptions s = small(Family::voids, 3);
  s.voids.target = Distribution::fixed_at(0.2);
  for (VoidPattern pattern : {VoidPattern::scattered_holes, VoidPattern::diffuse_thinning, VoidPattern::confluent_spaces,
                              VoidPattern::peripheral_band}) {
    s.voids.patterns = {pattern};
    const Subject g = generate_subject(s, 8, 0);
    // Every pattern is sized to the requested share of field voxels, exact up to one voxel.
    EXPECT_NEAR(g.truth.affected_fraction, 0.2, 0.001) << to_string(pattern);
  }
}


// Physical scale: the head (streaks) and the lungs (voids) have the same extent in mm whether a
// scenario samples them at 128 x 128 or at 64 x 64 with twice the spacing, and a larger image at
// the same spacing only shows more air around them. The fitted default instead grows them with
// the image. Extent: the field's widest row and tallest column in mm; equal within one coarse
// voxel (sampling tolerance, common practice, no source).
TEST(Phantom, PhysicalScaleKeepsTheAnatomyInMillimetres) {
  const auto extent_mm = [](const Subject& g) {
    const Geometry& geometry = g.labels.geometry();
    int low[2] = {1 << 30, 1 << 30}, high[2] = {-1, -1};
    for (int j = 0; j < g.labels.shape().y; ++j)
      for (int i = 0; i < g.labels.shape().x; ++i) {
        if (g.labels.at(i, j, 0) < kField) continue;
        low[0] = std::min(low[0], i), high[0] = std::max(high[0], i);
        low[1] = std::min(low[1], j), high[1] = std::max(high[1], j);
      }
    return std::array<double, 2>{(high[0] - low[0] + 1) * geometry.spacing_mm[0], (high[1] - low[1] + 1) * geometry.spacing_mm[1]};
  };
  for (Family family : {Family::streaks, Family::voids}) {
    const double fine = family == Family::streaks ? 1.5 : 2.8;  // 192 mm for a 140 x 175 mm head; 358 mm for a 320 mm chest
    const auto draw = [&](int size, double spacing, AnatomyScale scale) {
      ScenarioOptions s = default_scenario(family);
      s.geometry.size_2d = {size, size};
      s.geometry.spacing_mm = {spacing, spacing, spacing};
      s.geometry.anatomy_scale = scale;
      return extent_mm(generate_subject(s, 12, 3));
    };
    const auto at_128 = draw(128, fine, AnatomyScale::physical), at_64 = draw(64, 2.0 * fine, AnatomyScale::physical);
    const auto at_160 = draw(160, fine, AnatomyScale::physical);
    std::printf("%s physical: %.1f x %.1f mm at 128^2, %.1f x %.1f mm at 64^2, %.1f x %.1f mm at 160^2\n",
                to_string(family).c_str(), at_128[0], at_128[1], at_64[0], at_64[1], at_160[0], at_160[1]);
    for (int axis = 0; axis < 2; ++axis) {
      EXPECT_NEAR(at_64[axis], at_128[axis], 2.0 * fine) << to_string(family) << " axis " << axis << " seed 12";
      EXPECT_NEAR(at_160[axis], at_128[axis], fine) << to_string(family) << " axis " << axis << " seed 12";
    }
    if (family == Family::streaks) {
      // The head is the configured adult size times the per-subject factor 0.9..1.0.
      EXPECT_GE(at_128[0], 0.9 * 140.0 - fine);
      EXPECT_LE(at_128[0], 140.0 + fine);
      EXPECT_GE(at_128[1], 0.9 * 175.0 - fine);
      EXPECT_LE(at_128[1], 175.0 + fine);
    }
    const auto fitted_128 = draw(128, fine, AnatomyScale::fit_image), fitted_160 = draw(160, fine, AnatomyScale::fit_image);
    EXPECT_NEAR(fitted_160[0] / fitted_128[0], 160.0 / 128.0, 0.03) << to_string(family) << " seed 12";
  }
}

// Tube-shaped look-alikes: each is one connected component with the line code, never a lesion;
// its truth records the centreline length drawn, the start width and the exact area of the
// tapered tube, L (w + taper w) / 2 times the slice thickness (trapezoid, from memory); and it is
// really curved: some of its voxels lie further from its chord than its half width plus a voxel.
TEST(Phantom, TubeLookAlikesAreCurvedTaperedAndExactInTruth) {
  ScenarioOptions s = small(Family::streaks, 2);
  s.geometry.size_2d = {128, 128};
  s.streaks.line_shape = LineShape::tube;
  s.streaks.line_bend_deg = 40.0;
  s.streaks.line_taper = 0.5;
  s.streaks.lines = {CountDistribution::Kind::fixed, 0.0, 0.0, 2};
  int lines = 0, curved = 0;
  for (int subject = 0; subject < 20; ++subject) {
    const Subject g = generate_subject(s, 13, subject);
    const cv::Mat line_mask = slice_view(g.labels) == kLineDistractor;
    cv::Mat components;
    int line_records = 0;
    for (const ObjectRecord& object : g.truth.objects) {
      if (object.kind != ObjectKind::line_distractor) continue;
      ++line_records;
      EXPECT_GE(object.length_mm, 25.0);
      EXPECT_LE(object.length_mm, 50.0);
      const double expected_area = object.length_mm * (object.width_mm + 0.5 * object.width_mm) / 2.0;
      EXPECT_NEAR(object.volume_mm3, expected_area * s.geometry.spacing_mm[2], 1e-9 * expected_area);
      double furthest = 0.0;
      for (int j = 0; j < g.labels.shape().y; ++j)
        for (int i = 0; i < g.labels.shape().x; ++i) {
          if (g.labels.at(i, j, 0) != kLineDistractor) continue;
          const auto p = g.labels.geometry().world_mm(i, j, 0);
          const double dx = p[0] - object.centre_mm[0], dy = p[1] - object.centre_mm[1];
          const double along = dx * object.direction[0] + dy * object.direction[1];
          if (std::abs(along) > 0.5 * object.length_mm) continue;
          const double off = std::abs(dx * object.direction[1] - dy * object.direction[0]);
          if (off < 8.0) furthest = std::max(furthest, off);  // this line's voxels, not another's
        }
      curved += furthest > 0.5 * object.width_mm + 1.0 ? 1 : 0;
    }
    lines += line_records;
    EXPECT_EQ(cv::connectedComponents(line_mask, components, 8) - 1, line_records) << "seed 13 subject " << subject;
  }
  std::printf("tube look-alikes: %d of %d visibly curved\n", curved, lines);
  EXPECT_GE(lines, 30);
  EXPECT_GE(curved, lines / 2);
}
}  // namespace
}  // namespace frugal

namespace frugal {
namespace {

// An unreachable densitometry target is a user error naming the subject, never a silent default.
TEST(Phantom, UnreachableDensitometryTargetIsReported) {
  ScenarioOptions s = small(Family::voids, 2);
  s.voids.target = Distribution::fixed_at(0.9);
  s.voids.target_kind = VoidsTarget::densitometry;
  s.voids.patterns = {VoidPattern::diffuse_thinning};
  try {
    generate_subject(s, 8, 3);
    FAIL() << "accepted an unreachable target";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("subject 3"), std::string::npos) << error.what();
    EXPECT_NE(std::string(error.what()).find("diffuse_thinning"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace frugal
