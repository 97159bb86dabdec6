#pragma once
// Rater models: how a human rater or a semi-automatic tool turns truth into a label, and what it
// costs. Defaults are documented beside each value (source or "invented default"); every value is
// configurable from a rater YAML file (rater_yaml.h, docs/raters.md).

#include <cstdint>
#include <string>
#include <vector>

#include "phantoms/random.h"

namespace frugal {

// Probability that a rater notices a lesion: a logistic psychometric curve in log length and
// contrast, p = (1 - lapse) / (1 + exp(-(size_slope * ln(L / size50) + contrast_slope *
// (C - contrast50)))), with L the object's length_mm and C = |contrast| (dark lesions are as
// conspicuous as bright ones). The floor is 0 and the ceiling 1 - lapse, so p(size50, contrast50)
// is the midpoint (1 - lapse) / 2. Look-alikes are mistaken for lesions with fixed probabilities.
struct DetectionOptions {
  double size50_mm = 3.0;        // length at the curve's midpoint at contrast50 (invented default)
  double size_slope = 3.0;       // per unit of ln(length)
  double contrast50 = 0.2;       // white-matter units
  double contrast_slope = 12.0;  // per white-matter unit
  double lapse = 0.02;           // conspicuous lesions still missed this often
  double dot_confusion = 0.10;   // chance a round dot is taken for a lesion
  double line_confusion = 0.02;  // chance a vessel-like line is taken for a lesion
  std::string validate() const;
  double probability(double length_mm, double contrast) const;
};

struct CountingOptions {
  double slip_probability = 0.05;  // chance the tally is off by one (up or down equally)
  int cap = 0;                     // 0 = none; otherwise counts above cap are reported as "more than cap"
  std::string validate() const;
};

// Ordinal grade of the affected fraction: the perceived fraction is the true one moved on the
// logit scale by a rater bias and Gaussian perception noise, then binned.
struct GradingOptions {
  // Upper edges of all but the top bin; frugal's default: none (0), trace (< 3%), then
  // roughly doubling bins 3-10%, 10-25%, 25-50%, and an open top bin (invented default).
  std::vector<double> bin_edges{0.0, 0.03, 0.10, 0.25, 0.50};
  double perception_sd = 0.35;  // logit units
  double bias = 0.0;            // logit units; > 0 overestimates
  std::string validate() const;
  int bins() const { return static_cast<int>(bin_edges.size()) + 1; }
};

struct ClickOptions {
  double jitter_mm = 1.0;  // SD of click position per axis around the lesion centre
  std::string validate() const;
};

// Seeded region growing as a semi-automatic tool does it: seeds on the most conspicuous detected
// lesions, a voxel joins while its intensity is within `tolerance` (relative to the seed) of the
// seed intensity.
struct RegionGrowOptions {
  int seeds = 3;                    // lesions seeded per image, most conspicuous first
  double tolerance = 0.15;          // relative intensity tolerance (fraction of the seed value)
  int connectivity = 0;             // 4 or 8 in 2D, 6 or 26 in 3D; 0 = the smallest (4 / 6)
  double max_region_mm3 = 500.0;    // a region that grows beyond this leaked; it is cut back to the seed's ball
  std::string validate() const;
};

// Noisy outlines: the true lesion mask deformed by a smooth random displacement, biased outward
// (dilation) or inward (erosion), with protrusions, holes, missed lesions and spurious blobs.
struct OutlineOptions {
  double displacement_sd_mm = 0.5;
  double displacement_scale_mm = 4.0;  // smoothness of the displacement field
  double bias_mm = 0.0;                // > 0 dilates, < 0 erodes
  double protrusion_rate = 0.1;        // protrusions per lesion
  double hole_rate = 0.05;             // holes per lesion
  double spurious_rate = 0.2;          // spurious blobs per image
  std::string validate() const;
};

// Annotator seconds per label: a per-image term plus per-lesion (and for outlines per boundary
// length) terms. Sources of defaults are in rater.cpp.
struct CostOptions {
  double presence_per_image_s = 20.0;
  double count_per_image_s = 20.0;
  double count_per_lesion_s = 1.5;
  double grade_per_image_s = 20.0;
  double points_per_image_s = 20.0;
  double points_per_click_s = 2.4;
  double partial_per_image_s = 20.0;
  double partial_per_seed_s = 5.0;
  double outline_per_image_s = 20.0;
  double outline_per_lesion_s = 20.0;
  double outline_per_boundary_mm_s = 1.0;
  std::string validate() const;
};

// Several raters per subject: each rater's parameters are drawn around the panel's values.
struct PanelOptions {
  int raters = 1;
  double spread = 0.0;  // relative SD of each rater's detection size50, slip and perception parameters
  double bias_sd = 0.0; // SD of each rater's grading bias (logit units)
  std::string validate() const;
};

struct RaterOptions {
  std::string name = "rater";
  DetectionOptions detection;
  CountingOptions counting;
  GradingOptions grading;
  ClickOptions clicks;
  RegionGrowOptions region_grow;
  OutlineOptions outline;
  CostOptions cost;
  PanelOptions panel;
  std::string validate() const;
};

// The parameters of rater r of a panel, drawn from (seed, r) alone.
RaterOptions panel_member(const RaterOptions& panel, std::uint64_t seed, int rater);

// A careful rater, for checks of the learners: notices nearly every lesion, never slips or takes a
// look-alike for a lesion, outlines exactly, grades with the default bins and no perception error.
RaterOptions careful_rater();

}  // namespace frugal
