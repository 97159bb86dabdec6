#include "corruptors/rater.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <utility>

#include "phantoms/image.h"
#include "phantoms/key_path.h"
#include "phantoms/text_format.h"

namespace frugal {

// Where the cost defaults in rater.h come from. Annotation-time studies measured natural images,
// not lesions; where they exist they set the order of magnitude, the rest is marked.
//
// - Per-image terms, 20 s for every kind: viewing the image and taking one image-level decision.
//   An image-level label costs about 20 s per image (Bearman et al., "What's the point: semantic
//   segmentation with point supervision", ECCV 2016; from memory), and image-level labels plus one
//   point per class 22.1 s per image (same study, verified), i.e. about 20 s before the first
//   click. Presence, count, grade, points, partial masks and outlines all start with that look.
// - points_per_click_s = 2.4: about 2.4 s per extra point (Bearman et al. 2016; from memory).
// - count_per_lesion_s = 1.5: finding one more lesion without clicking it: the 2.4 s per extra
//   point less one click of about 0.85 s (a single pixel click takes 0.8-0.9 s, verified in a
//   public thread of a click-annotation study). With a few dozen lesions this gives a minute or
//   more per slice, in line with "counting lesions in a slice takes minutes" (common practice, no
//   source).
// - partial_per_seed_s = 5: one seed click (about 0.85 s, as above) plus checking the grown region
//   and nudging the tolerance (invented default).
// - Outlines: one object outline in natural images takes 54-79 s (Bearman et al. 2016, verified),
//   a polygon instance mask 79.2 s (Lin et al., ECCV 2014, verified as quoted by Cheng et al.
//   2021). Lesions are smaller and simpler, so frugal splits an outline into 20 s per lesion plus
//   1 s per mm of boundary: a default lesion (3-10 mm long, 1-2 mm wide, about 10-25 mm of
//   boundary) costs 30-45 s (invented split). Fifty small lesions then take about half an hour,
//   consistent with "voxel-wise outlining of many small lesions can take over an hour per slice"
//   (common practice, no source).

namespace {

// "key is value; allowed low..high unit" when value is outside [low, high] (NaN included).
std::string check_range(const char* key, double value, double low, double high, const char* unit = "") {
  if (value >= low && value <= high) return {};
  return std::string(key) + " is " + format_number(value) + "; allowed " + format_number(low) + ".." +
         format_number(high) + (unit[0] != '\0' ? std::string(" ") + unit : std::string());
}

// Collects the first message of a sequence of checks.
class FirstError {
 public:
  void operator()(const std::string& message) {
    if (error_.empty()) error_ = message;
  }
  std::string take() { return std::move(error_); }

 private:
  std::string error_;
};

constexpr double kMaxSeconds = 86400.0;  // one annotator-day per term is already absurd

}  // namespace

std::string DetectionOptions::validate() const {
  FirstError first;
  if (!(size50_mm > 0.0 && size50_mm <= 1000.0))
    first("size50_mm is " + format_number(size50_mm) + "; allowed > 0 up to 1000 mm");
  first(check_range("size_slope", size_slope, 0.0, 100.0, "per unit of ln(length)"));
  first(check_range("contrast50", contrast50, 0.0, 10.0, "(white matter = 1)"));
  first(check_range("contrast_slope", contrast_slope, 0.0, 1000.0, "per contrast unit"));
  // Above 0.5 the ceiling would sit below the midpoint of a curve meant for conspicuous lesions.
  first(check_range("lapse", lapse, 0.0, 0.5, "(probability)"));
  first(check_range("dot_confusion", dot_confusion, 0.0, 1.0, "(probability)"));
  first(check_range("line_confusion", line_confusion, 0.0, 1.0, "(probability)"));
  return first.take();
}

double DetectionOptions::probability(double length_mm, double contrast) const {
  if (!(length_mm > 0.0)) return 0.0;  // nothing drawn, nothing to see (also keeps log() finite)
  const double z = size_slope * std::log(length_mm / size50_mm) + contrast_slope * (std::abs(contrast) - contrast50);
  // exp(-z) overflows to +inf for very faint objects, which gives exactly 0: the intended limit.
  const double p = (1.0 - lapse) / (1.0 + std::exp(-z));
  return std::clamp(p, 0.0, 1.0);
}

std::string CountingOptions::validate() const {
  FirstError first;
  first(check_range("slip_probability", slip_probability, 0.0, 0.5, "(probability)"));
  if (cap < 0 || cap > 10000) first("cap is " + format_number(cap) + "; allowed 0 (no cap) or 1..10000 lesions");
  return first.take();
}

std::string GradingOptions::validate() const {
  if (bin_edges.empty() || bin_edges.size() > 20)
    return "bin_edges has " + format_number(static_cast<double>(bin_edges.size())) +
           " entries; allowed 1..20 upper edges (giving 2..21 grades)";
  for (std::size_t i = 0; i < bin_edges.size(); ++i) {
    const double edge = bin_edges[i];
    if (!(edge >= 0.0 && edge < 1.0))
      return "bin_edges entry " + format_number(static_cast<double>(i + 1)) + " is " + format_number(edge) +
             "; allowed 0 <= edge < 1 (fractions of the field)";
    if (i > 0 && !(edge > bin_edges[i - 1]))
      return "bin_edges entry " + format_number(static_cast<double>(i + 1)) + " is " + format_number(edge) +
             "; edges must increase strictly (previous " + format_number(bin_edges[i - 1]) + ")";
  }
  FirstError first;
  first(check_range("perception_sd", perception_sd, 0.0, 5.0, "logit units"));
  first(check_range("bias", bias, -5.0, 5.0, "logit units"));
  return first.take();
}

std::string ClickOptions::validate() const { return check_range("jitter_mm", jitter_mm, 0.0, 50.0, "mm"); }

std::string RegionGrowOptions::validate() const {
  FirstError first;
  if (seeds < 1 || seeds > 1000) first("seeds is " + format_number(seeds) + "; allowed 1..1000 lesions");
  first(check_range("tolerance", tolerance, 0.0, 1.0, "(fraction of the seed intensity)"));
  if (connectivity != 0 && connectivity != 4 && connectivity != 8 && connectivity != 6 && connectivity != 26)
    first("connectivity is " + format_number(connectivity) +
          "; allowed 0 (the smallest: 4 in 2D, 6 in 3D), 4 or 8 (2D), 6 or 26 (3D)");
  if (!(max_region_mm3 > 0.0 && max_region_mm3 <= 1e6))
    first("max_region_mm3 is " + format_number(max_region_mm3) + "; allowed > 0 up to 1e+06 mm3");
  return first.take();
}

std::string OutlineOptions::validate() const {
  FirstError first;
  first(check_range("displacement_sd_mm", displacement_sd_mm, 0.0, 20.0, "mm"));
  if (!(displacement_scale_mm > 0.0 && displacement_scale_mm <= 200.0))
    first("displacement_scale_mm is " + format_number(displacement_scale_mm) + "; allowed > 0 up to 200 mm");
  first(check_range("bias_mm", bias_mm, -20.0, 20.0, "mm"));
  first(check_range("protrusion_rate", protrusion_rate, 0.0, 20.0, "per lesion"));
  first(check_range("hole_rate", hole_rate, 0.0, 20.0, "per lesion"));
  first(check_range("spurious_rate", spurious_rate, 0.0, 100.0, "per image"));
  return first.take();
}

std::string CostOptions::validate() const {
  FirstError first;
  const std::pair<const char*, double> terms[] = {
      {"presence_per_image_s", presence_per_image_s},
      {"count_per_image_s", count_per_image_s},
      {"count_per_lesion_s", count_per_lesion_s},
      {"grade_per_image_s", grade_per_image_s},
      {"points_per_image_s", points_per_image_s},
      {"points_per_click_s", points_per_click_s},
      {"partial_per_image_s", partial_per_image_s},
      {"partial_per_seed_s", partial_per_seed_s},
      {"outline_per_image_s", outline_per_image_s},
      {"outline_per_lesion_s", outline_per_lesion_s},
      {"outline_per_boundary_mm_s", outline_per_boundary_mm_s},
  };
  for (const auto& [key, seconds] : terms) first(check_range(key, seconds, 0.0, kMaxSeconds, "s"));
  return first.take();
}

std::string PanelOptions::validate() const {
  FirstError first;
  if (raters < 1 || raters > 100) first("raters is " + format_number(raters) + "; allowed 1..100");
  first(check_range("spread", spread, 0.0, 2.0, "(SD of the log of each parameter)"));
  first(check_range("bias_sd", bias_sd, 0.0, 5.0, "logit units"));
  return first.take();
}

std::string RaterOptions::validate() const {
  if (name.empty()) return "name is empty; give the rater model a name";
  if (!is_printable_name(name))
    return "name holds only blanks or control characters; give the rater model a printable name";
  FirstError first;
  first(key_path_under("detection", detection.validate()));
  first(key_path_under("counting", counting.validate()));
  first(key_path_under("grading", grading.validate()));
  first(key_path_under("clicks", clicks.validate()));
  first(key_path_under("region_grow", region_grow.validate()));
  first(key_path_under("outline", outline.validate()));
  first(key_path_under("cost", cost.validate()));
  first(key_path_under("panel", panel.validate()));
  return first.take();
}

RaterOptions careful_rater() {
  RaterOptions rater;
  rater.name = "careful";
  rater.detection.size50_mm = 1.0;
  rater.detection.contrast50 = 0.05;
  rater.detection.lapse = 0.0;
  rater.detection.dot_confusion = 0.0;
  rater.detection.line_confusion = 0.0;
  rater.counting.slip_probability = 0.0;
  rater.grading.perception_sd = 0.0;
  rater.outline.displacement_sd_mm = 0.0;
  rater.outline.protrusion_rate = 0.0;
  rater.outline.hole_rate = 0.0;
  rater.outline.spurious_rate = 0.0;
  return rater;
}

RaterOptions panel_member(const RaterOptions& panel, std::uint64_t seed, int rater) {
  FRUGAL_CHECK(rater >= 0);
  // Its own stream, keyed by the seed and the rater index alone, so the same rater reads every
  // subject the same way. Label streams (labeler.cpp) end their repeat key in the kind, a byte
  // 0..5; 1'000'000 + r ends in 64..164 for the at most 100 raters of a panel, so none collide.
  RandomStream random(seed, 0, StreamPurpose::rater, 1'000'000U + static_cast<std::uint64_t>(rater));
  // Every draw is made whatever the spread, so each parameter always uses the same normal
  // deviate: changing the spread scales a rater's deviation and never reshuffles the panel.
  const double size = random.normal();
  const double slip = random.normal();
  const double perception = random.normal();
  const double displacement = random.normal();
  const double tolerance = random.normal();
  const double bias = random.normal();
  // Multiplicative (lognormal, median-preserving) spread; exp(0) == 1 exactly, so with spread 0
  // every member equals the panel. Results are clamped into the ranges validate() allows.
  const auto spread = [&](double value, double deviate) { return value * std::exp(panel.panel.spread * deviate); };
  RaterOptions member = panel;
  member.detection.size50_mm = std::clamp(spread(panel.detection.size50_mm, size), 1e-3, 1000.0);
  member.counting.slip_probability = std::clamp(spread(panel.counting.slip_probability, slip), 0.0, 0.5);
  member.grading.perception_sd = std::clamp(spread(panel.grading.perception_sd, perception), 0.0, 5.0);
  member.outline.displacement_sd_mm = std::clamp(spread(panel.outline.displacement_sd_mm, displacement), 0.0, 20.0);
  member.region_grow.tolerance = std::clamp(spread(panel.region_grow.tolerance, tolerance), 0.0, 1.0);
  member.grading.bias = std::clamp(panel.grading.bias + panel.panel.bias_sd * bias, -5.0, 5.0);
  return member;
}

}  // namespace frugal
