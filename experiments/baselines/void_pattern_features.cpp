#include "experiments/baselines/void_pattern_features.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <sstream>
#include <vector>

#include "experiments/baselines/threshold.h"
#include "experiments/measure/connected_components.h"
#include "phantoms/distance_transform.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::baselines {

std::string to_string(VoidPatternFeature feature) {
  switch (feature) {
    case VoidPatternFeature::below_threshold_fraction:
      return "below_threshold_fraction";
    case VoidPatternFeature::percentile15_hu:
      return "percentile15_hu";
    case VoidPatternFeature::log_component_volume_mm3:
      return "log_component_volume_mm3";
    case VoidPatternFeature::outer_band_enrichment:
      return "outer_band_enrichment";
    case VoidPatternFeature::local_fraction_cv:
      return "local_fraction_cv";
    case VoidPatternFeature::dark_boundary_share:
      return "dark_boundary_share";
  }
  return "unknown";
}

const std::array<VoidPatternFeature, kVoidPatternFeatureCount>& all_void_pattern_features() {
  static const std::array<VoidPatternFeature, kVoidPatternFeatureCount> features{
      VoidPatternFeature::below_threshold_fraction, VoidPatternFeature::percentile15_hu,
      VoidPatternFeature::log_component_volume_mm3, VoidPatternFeature::outer_band_enrichment,
      VoidPatternFeature::local_fraction_cv,        VoidPatternFeature::dark_boundary_share};
  return features;
}

std::string VoidPatternFeatureOptions::validate() const {
  if (!std::isfinite(threshold_hu))
    return "threshold_hu = " + format_number(threshold_hu) + ": use a finite value in HU (e.g. -950)";
  if (!(outer_band_depth_share > 0.0 && outer_band_depth_share < 1.0))
    return "outer_band_depth_share = " + format_number(outer_band_depth_share) + ": allowed (0, 1)";
  if (!(window_mm > 0.0 && std::isfinite(window_mm)))
    return "window_mm = " + format_number(window_mm) + ": must be a positive length in mm";
  return "";
}

namespace {

// The q-quantile with linear interpolation between order statistics (NumPy's default method).
double quantile(std::vector<float> values, double q) {
  std::sort(values.begin(), values.end());
  const double position = q * static_cast<double>(values.size() - 1);
  const auto lower = static_cast<std::size_t>(std::floor(position));
  const std::size_t upper = std::min(lower + 1, values.size() - 1);
  const double weight = position - static_cast<double>(lower);
  return (1.0 - weight) * values[lower] + weight * values[upper];
}

double log_component_volume_mm3(const LabelImage& below, std::size_t below_count) {
  if (below_count == 0) return 0.0;
  const measure::ComponentLabels components = measure::label_components(below);
  double sum_of_squares = 0.0;
  for (std::size_t size : components.sizes) sum_of_squares += static_cast<double>(size) * static_cast<double>(size);
  return std::log(sum_of_squares / static_cast<double>(below_count) * below.geometry().voxel_volume_mm3());
}

double outer_band_enrichment(const LabelImage& field, const LabelImage& below, double depth_share) {
  LabelImage outside(field.geometry(), 0);
  for (std::size_t v = 0; v < field.size(); ++v) outside.data()[v] = field.data()[v] == 0 ? 1 : 0;
  const std::vector<double> depth2 = squared_distance_to_features_mm2(outside);
  double deepest2 = 0.0;
  for (std::size_t v = 0; v < field.size(); ++v)
    if (field.data()[v] != 0) deepest2 = std::max(deepest2, depth2[v]);
  if (!std::isfinite(deepest2)) return 0.0;  // the field fills the image: it has no border
  const double band_depth2 = depth_share * depth_share * deepest2;
  std::size_t field_count = 0, band_count = 0, below_count = 0, below_in_band = 0;
  for (std::size_t v = 0; v < field.size(); ++v) {
    if (field.data()[v] == 0) continue;
    const bool in_band = depth2[v] <= band_depth2;
    ++field_count;
    band_count += in_band ? 1 : 0;
    below_count += below.data()[v];
    below_in_band += in_band ? below.data()[v] : 0;
  }
  if (below_count == 0 || band_count == 0) return 0.0;
  return (static_cast<double>(below_in_band) / static_cast<double>(below_count)) /
         (static_cast<double>(band_count) / static_cast<double>(field_count));
}

// Tiles of about window_mm per side; a tile counts when at least half of it is field, so that
// slivers at the lung edge do not dominate the spread.
double local_fraction_cv(const LabelImage& field, const LabelImage& below, double window_mm) {
  const Shape& shape = field.shape();
  const std::array<double, 3>& spacing = field.geometry().spacing_mm;
  const auto tile_side = [&](int axis, int extent) {
    if (extent == 1) return 1;
    return std::clamp(static_cast<int>(std::lround(window_mm / spacing[static_cast<std::size_t>(axis)])), 1, extent);
  };
  const int sx = tile_side(0, shape.x), sy = tile_side(1, shape.y), sz = tile_side(2, shape.z);
  double sum = 0.0, sum2 = 0.0;
  int tiles = 0;
  for (int z0 = 0; z0 < shape.z; z0 += sz)
    for (int y0 = 0; y0 < shape.y; y0 += sy)
      for (int x0 = 0; x0 < shape.x; x0 += sx) {
        std::size_t voxels = 0, in_field = 0, dark = 0;
        for (int z = z0; z < std::min(z0 + sz, shape.z); ++z)
          for (int y = y0; y < std::min(y0 + sy, shape.y); ++y)
            for (int x = x0; x < std::min(x0 + sx, shape.x); ++x) {
              const std::size_t v = field.index(x, y, z);
              ++voxels;
              if (field.data()[v] == 0) continue;
              ++in_field;
              dark += below.data()[v];
            }
        if (2 * in_field < voxels || in_field == 0) continue;
        const double fraction = static_cast<double>(dark) / static_cast<double>(in_field);
        sum += fraction;
        sum2 += fraction * fraction;
        ++tiles;
      }
  if (tiles < 2 || sum <= 0.0) return 0.0;
  const double mean = sum / tiles;
  return std::sqrt(std::max(sum2 / tiles - mean * mean, 0.0)) / mean;
}

double dark_boundary_share(const LabelImage& below, std::size_t below_count) {
  if (below_count == 0) return 0.0;
  const Shape& shape = below.shape();
  std::size_t rim = 0;
  for (int z = 0; z < shape.z; ++z)
    for (int y = 0; y < shape.y; ++y)
      for (int x = 0; x < shape.x; ++x) {
        if (below.at(x, y, z) == 0) continue;
        const auto light = [&](int nx, int ny, int nz) {
          const bool inside = nx >= 0 && ny >= 0 && nz >= 0 && nx < shape.x && ny < shape.y && nz < shape.z;
          return inside && below.at(nx, ny, nz) == 0;
        };
        rim += light(x - 1, y, z) || light(x + 1, y, z) || light(x, y - 1, z) || light(x, y + 1, z) ||
                       light(x, y, z - 1) || light(x, y, z + 1)
                   ? 1
                   : 0;
      }
  return static_cast<double>(rim) / static_cast<double>(below_count);
}

}  // namespace

VoidPatternFeatures void_pattern_features(const FloatImage& image, const LabelImage& field,
                                          const VoidPatternFeatureOptions& options) {
  const std::string problem = options.validate();
  if (!problem.empty()) throw UserError("void_pattern_features." + problem);
  ThresholdOptions threshold;
  threshold.threshold_hu = options.threshold_hu;
  // threshold_densitometry checks that the grids match.
  const ThresholdResult densitometry = threshold_densitometry(image, field, threshold);
  if (densitometry.field_count == 0)
    throw UserError("void_pattern_features: the lung field is empty; give a mask with at least one non-zero voxel");

  std::vector<float> field_hu;
  field_hu.reserve(densitometry.field_count);
  for (std::size_t v = 0; v < image.size(); ++v)
    if (field.data()[v] != 0) field_hu.push_back(image.data()[v]);

  VoidPatternFeatures features;
  features[VoidPatternFeature::below_threshold_fraction] = densitometry.fraction;
  features[VoidPatternFeature::percentile15_hu] = quantile(std::move(field_hu), 0.15);
  features[VoidPatternFeature::log_component_volume_mm3] =
      log_component_volume_mm3(densitometry.below, densitometry.below_count);
  features[VoidPatternFeature::outer_band_enrichment] =
      outer_band_enrichment(field, densitometry.below, options.outer_band_depth_share);
  features[VoidPatternFeature::local_fraction_cv] = local_fraction_cv(field, densitometry.below, options.window_mm);
  features[VoidPatternFeature::dark_boundary_share] = dark_boundary_share(densitometry.below, densitometry.below_count);
  return features;
}

}  // namespace frugal::baselines
