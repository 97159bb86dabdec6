#pragma once
// Hessian-based line filter (Frangi, Niessen, Vincken & Viergever, "Multiscale vessel enhancement
// filtering", MICCAI 1998) for bright (or, optionally, dark) tubular and elongated structures in
// 2D and 3D, and a zero-annotation count baseline built on it: threshold the response, take
// connected components, keep the small elongated ones.
//
// Discretisation (chosen so that the response equals scikit-image 0.19's `frangi` on the same
// array; see docs/baselines.md): Gaussian smoothing with the kernel cut at 4 sigma (radius
// int(4 sigma + 0.5) voxels) and half-sample reflected borders, then central differences applied
// twice (one-sided at the borders), in millimetres. Each scale's Hessian is multiplied by
// sigma_mm^2 so that scales compare.

#include <array>
#include <cstddef>
#include <string>
#include <vector>

#include "phantoms/image.h"

namespace frugal::baselines {

// Frangi's vesselness from the Hessian eigenvalues of one voxel, in any order (they are sorted
// by magnitude here, |l1| <= |l2| <= |l3|). Bright structures: 0 when l2 > 0 (2D) or when l2 or l3
// is > 0 (3D). Otherwise, with R_B = l1/l2 (2D) or |l1|/sqrt|l2 l3| (3D), R_A = |l2|/|l3| and
// S^2 = sum of l_i^2:
//   2D  V = exp(-R_B^2 / 2 beta^2) (1 - exp(-S^2 / 2 c^2))
//   3D  V = (1 - exp(-R_A^2 / 2 alpha^2)) exp(-R_B^2 / 2 beta^2) (1 - exp(-S^2 / 2 c^2))
// A zero denominator makes its ratio 0. c must be > 0 here.
double vesselness_2d(double lambda_a, double lambda_b, double beta, double c);
double vesselness_3d(double lambda_a, double lambda_b, double lambda_c, double alpha, double beta, double c);

struct LineFilterOptions {
  std::vector<double> sigmas_mm{1.0, 1.5, 2.0};  // scales; the response is the maximum over them
  double alpha = 0.5;                            // 3D only: sensitivity to plate-like structure (R_A); Frangi's value
  double beta = 0.5;                             // sensitivity to blob-like structure (R_B); Frangi's value
  // Sensitivity to overall second-order structure (Frangi's c, scikit-image's gamma), in image
  // units (the Hessian is scale-normalised). 0 = half the largest Hessian norm S over every voxel
  // and every scale, the rule Frangi et al. suggest (from memory).
  double c = 0.0;
  bool dark_structures = false;  // true finds dark lines on a bright background (negates the image)
  std::string validate() const;  // empty when valid
};

struct LineFilterResult {
  FloatImage response;  // vesselness in [0, 1), the image's geometry
  double c_used = 0.0;  // c after the automatic rule
};

// Throws UserError for invalid options or an image with an axis shorter than 3 voxels.
LineFilterResult line_filter(const FloatImage& image, const LineFilterOptions& options = {});

enum class ResponseThreshold { relative, absolute };

// The count baseline: which voxels of the response form candidates, and which candidates count.
// Candidates are the connected components of {response >= threshold} (relative: threshold times
// the map's maximum; absolute: the response value itself). Each component gets an equivalent
// ellipse (ellipsoid) from the second moments of its voxel centres in mm, each voxel taken as a
// uniform box (variance spacing^2/12 added per axis): length = 4 sqrt(largest moment), width =
// 4 sqrt(second-largest moment). A component counts when
//   voxels >= min_voxels, min_length_mm <= length <= max_length_mm, length / width >= min_elongation,
// and, when a field mask is given, its centre voxel lies in the field. The length cap drops long
// vessel-like lines, the elongation floor drops round dots, the size floor drops noise specks.
//
// Defaults were chosen on the default 2D streaks scenario (1 mm voxels, lesions 3-10 x 1-2 mm,
// low noise): one scale of 1 mm, since larger scales merge neighbouring lesions and round short
// ones into blobs; 12% of the maximum response; elongation 1.6 and length 2-16 mm.
struct LineCountOptions {
  LineFilterOptions filter{{1.0}};  // sigmas_mm = {1.0}, every other filter option at its default
  ResponseThreshold threshold_kind = ResponseThreshold::relative;
  double threshold = 0.12;
  int connectivity = 0;  // 4/8 (2D), 6/18/26 (3D); 0 = full
  int min_voxels = 3;
  double min_length_mm = 2.0;
  double max_length_mm = 16.0;
  double min_elongation = 1.6;
  std::string validate() const;  // empty when valid
};

struct LineComponent {
  std::array<double, 3> centre_mm{};  // world position of the voxel-centre mean
  std::size_t voxels = 0;
  double volume_mm3 = 0.0;  // voxels times voxel volume (2D: times slice thickness)
  double length_mm = 0.0;
  double width_mm = 0.0;
  double peak_response = 0.0;
  bool counted = false;  // passed every rule of LineCountOptions
};

struct LineCountResult {
  int count = 0;                          // components with counted == true
  std::vector<LineComponent> components;  // every candidate, in label order (first voxel in memory order)
  FloatImage response;
  double c_used = 0.0;
  double threshold_used = 0.0;  // the absolute response threshold applied
};

// `field`, when not null, must have the image's grid; components whose centre voxel is 0 there
// are not counted (e.g. to ignore the response along the outer edge of a head).
LineCountResult count_lines(const FloatImage& image, const LineCountOptions& options = {},
                            const LabelImage* field = nullptr);

}  // namespace frugal::baselines
