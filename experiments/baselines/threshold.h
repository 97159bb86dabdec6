#pragma once
// Densitometry baseline, no training: the fraction of a field (a lung mask) whose voxels lie
// strictly below a threshold in Hounsfield units. The default -950 HU is the emphysema threshold
// of Gevenois et al. 1995 (%LAA-950, "relative area below -950 HU").

#include <cstddef>
#include <string>

#include "phantoms/image.h"

namespace frugal::baselines {

struct ThresholdOptions {
  double threshold_hu = -950.0;  // voxels strictly below this count; voxels equal to it do not
  std::string validate() const;  // empty when valid
};

struct ThresholdResult {
  double fraction = 0.0;        // below_count / field_count; 0 for an empty field
  std::size_t below_count = 0;  // field voxels strictly below the threshold
  std::size_t field_count = 0;  // voxels in the field
  LabelImage below;             // 1 on field voxels below the threshold, 0 elsewhere
};

// `field` selects the voxels that count: every non-zero value. A truth label image therefore
// gives the whole field (every code >= kField, lesions included) and a user's 0/1 or 0/255 mask
// gives its foreground. The comparison runs in the image's float precision (the threshold is
// rounded to float first), as NumPy compares a float32 array with a Python float and as the
// voids generator computes its densitometry truth. Throws UserError when the shapes differ or
// the options are invalid.
ThresholdResult threshold_densitometry(const FloatImage& image, const LabelImage& field,
                                       const ThresholdOptions& options = {});
// The whole image is the field.
ThresholdResult threshold_densitometry(const FloatImage& image, const ThresholdOptions& options = {});

}  // namespace frugal::baselines
