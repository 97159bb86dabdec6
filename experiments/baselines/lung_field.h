#pragma once
// The lung field of a CT-like image found from the image alone, so that a baseline never needs a
// truth mask: voxels darker than a soft-tissue cut that are not connected to the image border.
// Connected to the border means the air around the body; what is left is the air-filled lungs.

#include <string>

#include "phantoms/image.h"

namespace frugal::baselines {

struct LungFieldOptions {
  double air_below_hu = -400.0;  // lung and air lie well below it, soft tissue (about 40 HU) well above
  std::string validate() const;  // empty when valid
};

// 1 on the lung field, 0 elsewhere, on the image's grid. Components are fully connected (8 in 2D,
// 26 in 3D), the rule learn's voids field estimate uses, so both find the same lungs. Throws
// UserError for invalid options; an image with no lung gives an all-zero field.
LabelImage lung_field_from_image(const FloatImage& image, const LungFieldOptions& options = {});

}  // namespace frugal::baselines
