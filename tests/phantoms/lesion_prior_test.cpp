#include "phantoms/lesion_prior.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "phantoms/phantom.h"

namespace frugal {
namespace {

using Vec = std::array<double, 3>;

// Few short thin lesions and no look-alikes, so that keeping objects apart barely moves them.
ScenarioOptions prior_scenario(LesionDensity density, LesionOrientation orientation) {
  ScenarioOptions s = default_scenario(Family::streaks);
  s.geometry.size_2d = {128, 128};
  s.streaks.count = {CountDistribution::Kind::fixed, 0.0, 0.0, 3};
  s.streaks.length_mm = Distribution::fixed_at(3.0);
  s.streaks.width_mm = Distribution::fixed_at(1.0);
  s.streaks.min_separation_mm = 0.0;
  s.streaks.dots = {CountDistribution::Kind::fixed, 0.0, 0.0, 0};
  s.streaks.lines = {CountDistribution::Kind::fixed, 0.0, 0.0, 0};
  s.streaks.placement.density = density;
  s.streaks.placement.decay_mm = 4.0;
  s.streaks.placement.orientation = orientation;
  s.streaks.placement.radial_spread_deg = 10.0;
  return s;
}

// The head and its ventricles as the subject's field mask shows them: the head's semi-axes are
// the largest centre offsets of field voxels plus half a voxel; the ventricles sit at the
// documented share of them (docs/scenarios.md: centres at x = +-12%, y = -5%; semi-axes 7%, 22%).
struct MeasuredHead {
  double semi_x = 0.0, semi_y = 0.0;
  VentriclePair ventricles;
};

MeasuredHead measure_head(const Subject& g) {
  MeasuredHead head;
  const Geometry& geometry = g.labels.geometry();
  for (int j = 0; j < g.labels.shape().y; ++j)
    for (int i = 0; i < g.labels.shape().x; ++i) {
      if (g.labels.at(i, j, 0) < kField) continue;
      const Vec p = geometry.world_mm(i, j, 0);
      head.semi_x = std::max(head.semi_x, std::abs(p[0]) + 0.5 * geometry.spacing_mm[0]);
      head.semi_y = std::max(head.semi_y, std::abs(p[1]) + 0.5 * geometry.spacing_mm[1]);
    }
  for (int side = 0; side < 2; ++side) {
    head.ventricles.ventricles[side].centre_mm = {(side == 0 ? -1.0 : 1.0) * 0.12 * head.semi_x, -0.05 * head.semi_y,
                                                  0.0};
    head.ventricles.ventricles[side].semi_axes_mm = {0.07 * head.semi_x, 0.22 * head.semi_y, 1.0};
  }
  return head;
}

// Euclidean distance from p to the ellipse x^2/a^2 + y^2/b^2 = 1 (0 inside): the closest point is
// (a^2 x/(t + a^2), b^2 y/(t + b^2)) for the root t > 0 of (a x/(t + a^2))^2 + (b y/(t + b^2))^2 = 1,
// found by bisection (Lagrange condition for the nearest point; from memory).
double distance_to_ellipse(double x, double y, double a, double b) {
  if ((x * x) / (a * a) + (y * y) / (b * b) <= 1.0) return 0.0;
  double low = 0.0, high = std::hypot(x, y) * std::max(a, b) + a * a + b * b;
  for (int iteration = 0; iteration < 100; ++iteration) {
    const double t = 0.5 * (low + high);
    const double u = a * x / (t + a * a), v = b * y / (t + b * b);
    (u * u + v * v > 1.0 ? low : high) = t;
  }
  const double t = 0.5 * (low + high);
  return std::hypot(x - a * a * x / (t + a * a), y - b * b * y / (t + b * b));
}

double wall_distance(const VentriclePair& pair, const Vec& p) {
  double nearest = 1e300;
  for (const Ventricle& v : pair.ventricles)
    nearest = std::min(nearest, distance_to_ellipse(p[0] - v.centre_mm[0], p[1] - v.centre_mm[1], v.semi_axes_mm[0],
                                                    v.semi_axes_mm[1]));
  return nearest;
}

// Share of lesion centres within 5 mm of a ventricle wall (true Euclidean distance), measured over
// 150 subjects (450 lesions), against the share the placement model implies: centres uniform in
// the head within normalised radius 0.82 (docs/scenarios.md), weighted by exp(-d / decay) with d
// the distance along the ray from the ventricle centre and none within normalised radius 1.2 of a
// ventricle (periventricular), or unweighted (uniform); integrated on a 1 mm grid per subject.
// Tolerance 0.07: three binomial standard errors at 450 lesions (common practice, no source).
TEST(LesionPrior, ShareNearTheVentriclesMatchesThePriorAndExceedsUniform) {
  double measured[2] = {0.0, 0.0}, predicted[2] = {0.0, 0.0};
  const LesionDensity densities[2] = {LesionDensity::uniform, LesionDensity::periventricular};
  const int subjects = 150;
  const double within_mm = 5.0, decay_mm = 4.0;
  for (int d = 0; d < 2; ++d) {
    const ScenarioOptions s = prior_scenario(densities[d], LesionOrientation::free);
    int lesions = 0, near = 0;
    double expected = 0.0;
    for (int subject = 0; subject < subjects; ++subject) {
      const Subject g = generate_subject(s, 21, subject);
      const MeasuredHead head = measure_head(g);
      double weight_sum = 0.0, weight_near = 0.0;
      for (double y = -head.semi_y; y <= head.semi_y; y += 1.0)
        for (double x = -head.semi_x; x <= head.semi_x; x += 1.0) {
          const double r = std::hypot(x / head.semi_x, y / head.semi_y);
          if (r > 0.82) continue;
          const Vec p{x, y, 0.0};
          double weight = 1.0;
          if (densities[d] == LesionDensity::periventricular) {
            const bool in_csf =
                head.ventricles.normalised_radius(p, 0) < 1.2 || head.ventricles.normalised_radius(p, 1) < 1.2;
            weight = in_csf ? 0.0 : std::exp(-head.ventricles.wall_distance_mm(p) / decay_mm);
          }
          weight_sum += weight;
          if (wall_distance(head.ventricles, p) <= within_mm) weight_near += weight;
        }
      for (const ObjectRecord& object : g.truth.objects) {
        ++lesions;
        near += wall_distance(head.ventricles, object.centre_mm) <= within_mm ? 1 : 0;
        expected += weight_near / weight_sum;
      }
    }
    ASSERT_GT(lesions, 400) << "seed 21";
    measured[d] = static_cast<double>(near) / lesions;
    predicted[d] = expected / lesions;
    std::printf("%s: share within %.0f mm of a ventricle wall %.3f (model %.3f, %d lesions)\n",
                to_string(densities[d]).c_str(), within_mm, measured[d], predicted[d], lesions);
    EXPECT_NEAR(measured[d], predicted[d], 0.07) << to_string(densities[d]) << " seed 21";
  }
  EXPECT_GT(measured[1], measured[0] + 0.3) << "seed 21";
}

// Radial orientation: the angle between a lesion's axis and the direction from the nearer
// ventricle centre is normal with SD radial_spread_deg (10 degrees), so its absolute value has
// mean 10 sqrt(2/pi) = 7.98 degrees (half-normal mean, from memory). Tolerance 1 degree: 3.5
// standard errors at 450 lesions plus the ventricle centres measured from the mask (common
// practice, no source). Free isotropic directions give about 45 degrees.
TEST(LesionPrior, RadialOrientationFollowsTheVentricleField) {
  const LesionOrientation orientations[2] = {LesionOrientation::free, LesionOrientation::radial};
  double mean_deviation[2] = {0.0, 0.0};
  for (int o = 0; o < 2; ++o) {
    const ScenarioOptions s = prior_scenario(LesionDensity::uniform, orientations[o]);
    double sum = 0.0;
    int lesions = 0;
    for (int subject = 0; subject < 150; ++subject) {
      const Subject g = generate_subject(s, 22, subject);
      const MeasuredHead head = measure_head(g);
      for (const ObjectRecord& object : g.truth.objects) {
        const Vec radial = head.ventricles.radial_direction(object.centre_mm);
        const double cosine = std::abs(object.direction[0] * radial[0] + object.direction[1] * radial[1]);
        sum += std::acos(std::min(1.0, cosine)) * 180.0 / M_PI;  // an axis has no sign: 0..90 degrees
        ++lesions;
      }
    }
    ASSERT_GT(lesions, 400) << "seed 22";
    mean_deviation[o] = sum / lesions;
    std::printf("%s: mean |angle to the radial direction| %.2f degrees over %d lesions\n",
                to_string(orientations[o]).c_str(), mean_deviation[o], lesions);
  }
  EXPECT_NEAR(mean_deviation[1], 10.0 * std::sqrt(2.0 / M_PI), 1.0) << "seed 22";
  EXPECT_NEAR(mean_deviation[0], 45.0, 5.0) << "seed 22";
}

}  // namespace
}  // namespace frugal
