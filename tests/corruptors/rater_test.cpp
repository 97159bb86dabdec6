#include "corruptors/rater.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

namespace frugal {
namespace {

TEST(RaterOptions, DefaultsAreValid) { EXPECT_EQ(RaterOptions{}.validate(), ""); }

struct BadValue {
  const char* name;
  void (*spoil)(RaterOptions&);
  const char* expected;  // the start of the message: key path, value and what is allowed
};

class BadValues : public ::testing::TestWithParam<BadValue> {};

TEST_P(BadValues, NameKeyValueAndWhatIsAllowed) {
  RaterOptions options;
  GetParam().spoil(options);
  const std::string message = options.validate();
  EXPECT_EQ(message.rfind(GetParam().expected, 0), 0U) << message;
}

INSTANTIATE_TEST_SUITE_P(
    Catalogue, BadValues,
    ::testing::Values(
        BadValue{"empty_name", [](RaterOptions& o) { o.name.clear(); }, "name is empty"},
        BadValue{"size50_zero", [](RaterOptions& o) { o.detection.size50_mm = 0.0; },
                 "detection.size50_mm is 0; allowed > 0 up to 1000 mm"},
        BadValue{"size_slope_negative", [](RaterOptions& o) { o.detection.size_slope = -1.0; },
                 "detection.size_slope is -1; allowed 0..100"},
        BadValue{"contrast50_nan", [](RaterOptions& o) { o.detection.contrast50 = std::nan(""); },
                 "detection.contrast50 is nan; allowed 0..10"},
        BadValue{"contrast_slope", [](RaterOptions& o) { o.detection.contrast_slope = 2000.0; },
                 "detection.contrast_slope is 2000; allowed 0..1000"},
        BadValue{"lapse", [](RaterOptions& o) { o.detection.lapse = 0.7; }, "detection.lapse is 0.7; allowed 0..0.5"},
        BadValue{"dot_confusion", [](RaterOptions& o) { o.detection.dot_confusion = 1.5; },
                 "detection.dot_confusion is 1.5; allowed 0..1"},
        BadValue{"line_confusion", [](RaterOptions& o) { o.detection.line_confusion = -0.1; },
                 "detection.line_confusion is -0.1; allowed 0..1"},
        BadValue{"slip", [](RaterOptions& o) { o.counting.slip_probability = 0.6; },
                 "counting.slip_probability is 0.6; allowed 0..0.5"},
        BadValue{"cap", [](RaterOptions& o) { o.counting.cap = -2; }, "counting.cap is -2; allowed 0 (no cap)"},
        BadValue{"no_edges", [](RaterOptions& o) { o.grading.bin_edges.clear(); },
                 "grading.bin_edges has 0 entries; allowed 1..20"},
        BadValue{"edge_above_one",
                 [](RaterOptions& o) {
                   o.grading.bin_edges = {0.0, 1.2};
                 },
                 "grading.bin_edges entry 2 is 1.2; allowed 0 <= edge < 1"},
        BadValue{"edges_not_increasing",
                 [](RaterOptions& o) {
                   o.grading.bin_edges = {0.0, 0.2, 0.1};
                 },
                 "grading.bin_edges entry 3 is 0.1; edges must increase strictly"},
        BadValue{"perception_sd", [](RaterOptions& o) { o.grading.perception_sd = -0.1; },
                 "grading.perception_sd is -0.1; allowed 0..5"},
        BadValue{"grading_bias", [](RaterOptions& o) { o.grading.bias = 9.0; }, "grading.bias is 9; allowed -5..5"},
        BadValue{"jitter", [](RaterOptions& o) { o.clicks.jitter_mm = -1.0; },
                 "clicks.jitter_mm is -1; allowed 0..50 mm"},
        BadValue{"seeds", [](RaterOptions& o) { o.region_grow.seeds = 0; }, "region_grow.seeds is 0; allowed 1..1000"},
        BadValue{"tolerance", [](RaterOptions& o) { o.region_grow.tolerance = 1.5; },
                 "region_grow.tolerance is 1.5; allowed 0..1"},
        BadValue{"connectivity", [](RaterOptions& o) { o.region_grow.connectivity = 5; },
                 "region_grow.connectivity is 5; allowed 0"},
        BadValue{"max_region", [](RaterOptions& o) { o.region_grow.max_region_mm3 = 0.0; },
                 "region_grow.max_region_mm3 is 0; allowed > 0"},
        BadValue{"displacement_sd", [](RaterOptions& o) { o.outline.displacement_sd_mm = 30.0; },
                 "outline.displacement_sd_mm is 30; allowed 0..20 mm"},
        BadValue{"displacement_scale", [](RaterOptions& o) { o.outline.displacement_scale_mm = 0.0; },
                 "outline.displacement_scale_mm is 0; allowed > 0 up to 200 mm"},
        BadValue{"outline_bias", [](RaterOptions& o) { o.outline.bias_mm = -25.0; },
                 "outline.bias_mm is -25; allowed -20..20 mm"},
        BadValue{"protrusions", [](RaterOptions& o) { o.outline.protrusion_rate = -1.0; },
                 "outline.protrusion_rate is -1; allowed 0..20"},
        BadValue{"holes", [](RaterOptions& o) { o.outline.hole_rate = 21.0; },
                 "outline.hole_rate is 21; allowed 0..20"},
        BadValue{"spurious", [](RaterOptions& o) { o.outline.spurious_rate = 101.0; },
                 "outline.spurious_rate is 101; allowed 0..100"},
        BadValue{"negative_cost", [](RaterOptions& o) { o.cost.points_per_click_s = -2.4; },
                 "cost.points_per_click_s is -2.4; allowed 0..86400 s"},
        BadValue{"huge_cost", [](RaterOptions& o) { o.cost.outline_per_boundary_mm_s = 1e6; },
                 "cost.outline_per_boundary_mm_s is 1e+06; allowed 0..86400 s"},
        BadValue{"raters", [](RaterOptions& o) { o.panel.raters = 0; }, "panel.raters is 0; allowed 1..100"},
        BadValue{"spread", [](RaterOptions& o) { o.panel.spread = 3.0; }, "panel.spread is 3; allowed 0..2"},
        BadValue{"bias_sd", [](RaterOptions& o) { o.panel.bias_sd = -1.0; }, "panel.bias_sd is -1; allowed 0..5"}),
    [](const ::testing::TestParamInfo<BadValue>& param_info) { return std::string(param_info.param.name); });

// The configured logistic curve (rater.h): p = (1 - lapse) / (1 + exp(-z)).
TEST(DetectionCurve, MidpointAtSize50AndContrast50) {
  DetectionOptions d;
  EXPECT_DOUBLE_EQ(d.probability(d.size50_mm, d.contrast50), (1.0 - d.lapse) / 2.0);  // z = 0: the midpoint
  // Dark lesions are as conspicuous as bright ones (C = |contrast|).
  EXPECT_DOUBLE_EQ(d.probability(d.size50_mm, -d.contrast50), (1.0 - d.lapse) / 2.0);
  d.lapse = 0.0;
  EXPECT_DOUBLE_EQ(d.probability(d.size50_mm, d.contrast50), 0.5);
}

TEST(DetectionCurve, ValuesAtDocumentedPoints) {
  DetectionOptions d;
  d.size50_mm = 4.0;
  d.size_slope = 2.0;
  d.contrast50 = 0.3;
  d.contrast_slope = 10.0;
  d.lapse = 0.1;
  // size_slope * ln(L / size50) = ln 3 gives logistic(ln 3) = 3/4 of the ceiling (formula).
  const double length = 4.0 * std::exp(std::log(3.0) / 2.0);
  EXPECT_NEAR(d.probability(length, 0.3), 0.9 * 0.75, 1e-12);
  // z = -ln 3 gives 1/4 of the ceiling; here through contrast alone: 10 * (C - 0.3) = -ln 3.
  EXPECT_NEAR(d.probability(4.0, 0.3 - std::log(3.0) / 10.0), 0.9 * 0.25, 1e-12);
  // Limits: the floor is 0 (nothing drawn, or very faint) and the ceiling 1 - lapse.
  EXPECT_EQ(d.probability(0.0, 0.3), 0.0);
  EXPECT_EQ(d.probability(-1.0, 0.3), 0.0);
  EXPECT_NEAR(d.probability(1e6, 5.0), 0.9, 1e-12);
  EXPECT_EQ(d.probability(1e-300, 0.0), 0.0);
}

TEST(DetectionCurve, MonotoneInLengthAndContrastAndInsideZeroOne) {
  const DetectionOptions d;
  double previous = -1.0;
  for (double length = 0.1; length < 100.0; length *= 1.1) {
    const double p = d.probability(length, 0.4);
    EXPECT_GT(p, previous) << length;
    EXPECT_GE(p, 0.0);
    EXPECT_LE(p, 1.0 - d.lapse);
    previous = p;
  }
  previous = -1.0;
  for (double contrast = 0.0; contrast < 1.5; contrast += 0.05) {
    const double p = d.probability(3.0, contrast);
    EXPECT_GT(p, previous) << contrast;
    previous = p;
  }
}

TEST(PanelMember, RaterZeroOfAPanelWithoutSpreadIsThePanel) {
  RaterOptions panel;
  panel.panel.raters = 4;
  panel.grading.bias = 0.3;
  for (int rater = 0; rater < 4; ++rater) {
    const RaterOptions member = panel_member(panel, 11, rater);
    EXPECT_EQ(member.detection.size50_mm, panel.detection.size50_mm);
    EXPECT_EQ(member.counting.slip_probability, panel.counting.slip_probability);
    EXPECT_EQ(member.grading.perception_sd, panel.grading.perception_sd);
    EXPECT_EQ(member.grading.bias, panel.grading.bias);
    EXPECT_EQ(member.outline.displacement_sd_mm, panel.outline.displacement_sd_mm);
    EXPECT_EQ(member.region_grow.tolerance, panel.region_grow.tolerance);
  }
}

TEST(PanelMember, DeterministicFromSeedAndRater) {
  RaterOptions panel;
  panel.panel = {5, 0.3, 0.4};
  const RaterOptions a = panel_member(panel, 7, 2);
  const RaterOptions b = panel_member(panel, 7, 2);
  EXPECT_EQ(a.detection.size50_mm, b.detection.size50_mm);
  EXPECT_EQ(a.grading.bias, b.grading.bias);
  EXPECT_NE(panel_member(panel, 7, 3).detection.size50_mm, a.detection.size50_mm);
  EXPECT_NE(panel_member(panel, 8, 2).detection.size50_mm, a.detection.size50_mm);
  EXPECT_TRUE(a.validate().empty()) << a.validate();
}

// Spread: ln(member / panel) ~ N(0, spread) for the multiplicative parameters and
// member bias - panel bias ~ N(0, bias_sd). Expected SDs are the configured ones; tolerances are
// 4 standard errors (mean: sd / sqrt(n); SD: sd / sqrt(2n), the normal-theory SE of an SD).
TEST(PanelMember, SpreadMatchesTheConfiguredSd) {
  RaterOptions panel;
  panel.counting.slip_probability = 0.01;  // far from the 0.5 clamp
  panel.panel = {100, 0.25, 0.4};
  const int n = 4000;
  const std::uint64_t seed = 21;
  std::vector<std::vector<double>> samples(6);
  for (int rater = 0; rater < n; ++rater) {
    const RaterOptions m = panel_member(panel, seed, rater);
    samples[0].push_back(std::log(m.detection.size50_mm / panel.detection.size50_mm));
    samples[1].push_back(std::log(m.counting.slip_probability / panel.counting.slip_probability));
    samples[2].push_back(std::log(m.grading.perception_sd / panel.grading.perception_sd));
    samples[3].push_back(std::log(m.outline.displacement_sd_mm / panel.outline.displacement_sd_mm));
    samples[4].push_back(std::log(m.region_grow.tolerance / panel.region_grow.tolerance));
    samples[5].push_back(m.grading.bias - panel.grading.bias);
  }
  for (std::size_t k = 0; k < samples.size(); ++k) {
    const double expected_sd = k < 5 ? panel.panel.spread : panel.panel.bias_sd;
    double sum = 0.0, sum_squares = 0.0;
    for (double v : samples[k]) sum += v;
    const double mean = sum / n;
    for (double v : samples[k]) sum_squares += (v - mean) * (v - mean);
    const double sd = std::sqrt(sum_squares / (n - 1));
    EXPECT_NEAR(mean, 0.0, 4.0 * expected_sd / std::sqrt(n)) << "parameter " << k << ", seed " << seed;
    EXPECT_NEAR(sd, expected_sd, 4.0 * expected_sd / std::sqrt(2.0 * n)) << "parameter " << k << ", seed " << seed;
  }
  // The parameters of one rater are drawn independently: size50 and bias uncorrelated
  // (|r| < 4 / sqrt(n), the SE of a zero correlation).
  double product = 0.0;
  for (int i = 0; i < n; ++i)
    product += samples[0][static_cast<std::size_t>(i)] * samples[5][static_cast<std::size_t>(i)];
  EXPECT_LT(std::abs(product / n / (panel.panel.spread * panel.panel.bias_sd)), 4.0 / std::sqrt(n));
}

TEST(PanelMember, ClampsIntoTheAllowedRanges) {
  RaterOptions panel;
  panel.counting.slip_probability = 0.4;
  panel.panel = {100, 2.0, 5.0};
  for (int rater = 0; rater < 200; ++rater) {
    const RaterOptions m = panel_member(panel, 3, rater);
    EXPECT_TRUE(m.validate().empty()) << "rater " << rater << ": " << m.validate();
  }
}

}  // namespace
}  // namespace frugal
