#pragma once
// A short fixed vector of image features that tells the spatial patterns of low-density lung
// regions apart (the voids family's scattered holes, diffuse thinning, confluent spaces and
// peripheral band) even when every pattern has the same densitometry. Computed from the image
// in HU and a lung field mask only (lung_field.h finds one from the image), in 2D and 3D.

#include <array>
#include <cstddef>
#include <string>

#include "phantoms/image.h"

namespace frugal::baselines {

enum class VoidPatternFeature {
  // %LAA: share of the field below threshold_hu (threshold.h). Matched by design in a
  // densitometry-matched scenario; kept so that "densitometry alone" is a subset of this vector.
  below_threshold_fraction,
  // 15th percentile of the field's HU (PD15, Parr et al., Thorax 2006), the other common
  // densitometry index: it sees how far below the threshold the darkest voxels go.
  percentile15_hu,
  // log of the volume-weighted mean volume (sum v^2 / sum v, in mm^3; mm^2 x slice in 2D) of the
  // connected components of below-threshold voxels: the size of the dark area a dark voxel sits
  // in. Many small holes and a few large spaces cover the same share with very different sizes;
  // weighting by volume keeps single-voxel noise specks from swamping it.
  log_component_volume_mm3,
  // Share of below-threshold voxels in the outer band of the field divided by the band's share
  // of the field: 1 when the dark voxels ignore the border, well above 1 for a peripheral band.
  outer_band_enrichment,
  // Coefficient of variation of the below-threshold fraction over tiles of window_mm: low when
  // dark voxels are spread over the whole field, high when they gather in a few places.
  local_fraction_cv,
  // Share of below-threshold voxels with a face neighbour that is not below it: solid dark
  // spaces are mostly interior, small holes and partial thinning (dark and lighter voxels mixed
  // by noise) are nearly all rim.
  dark_boundary_share,
};
inline constexpr std::size_t kVoidPatternFeatureCount = 6;

std::string to_string(VoidPatternFeature feature);
// Every feature in the order of VoidPatternFeatures::values.
const std::array<VoidPatternFeature, kVoidPatternFeatureCount>& all_void_pattern_features();

struct VoidPatternFeatures {
  std::array<double, kVoidPatternFeatureCount> values{};
  double operator[](VoidPatternFeature feature) const { return values[static_cast<std::size_t>(feature)]; }
  double& operator[](VoidPatternFeature feature) { return values[static_cast<std::size_t>(feature)]; }
};

struct VoidPatternFeatureOptions {
  double threshold_hu = -950.0;  // densitometry threshold (Gevenois et al. 1995), as in threshold.h
  // The outer band: field voxels at most this share of the field's largest depth (distance to
  // the nearest voxel outside the field) from its border, so the band scales with the lungs.
  double outer_band_depth_share = 0.25;
  double window_mm = 6.0;        // side of the tiles for local_fraction_cv (in-plane only in 2D)
  std::string validate() const;  // empty when valid
};

// `field` selects the lung: every non-zero voxel. Below-threshold components are fully
// connected (8 in 2D, 26 in 3D); face neighbours are 4 in 2D and 6 in 3D. Distances are in mm,
// so anisotropic voxels are handled; voxels beyond the image edge count neither as outside the
// field nor as neighbours. With no below-threshold voxel, every feature but the first two is 0.
// Throws UserError for invalid options, a field of another grid, or an empty field.
VoidPatternFeatures void_pattern_features(const FloatImage& image, const LabelImage& field,
                                          const VoidPatternFeatureOptions& options = {});

}  // namespace frugal::baselines
