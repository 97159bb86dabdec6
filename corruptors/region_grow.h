#pragma once
// Partial masks from seeded region growing, as a semi-automatic tool makes them. 2D growing uses
// OpenCV's flood fill; 3D growing is frugal's own and agrees with skimage.segmentation.flood.

#include <array>
#include <vector>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

// Voxels connected to `seed` whose intensity lies within [seed value - tolerance, seed value +
// tolerance] (absolute units), with 4/8 (2D) or 6/26 (3D) connectivity. Returns a 0/1 mask.
LabelImage flood_region(const FloatImage& image, const std::array<int, 3>& seed, double tolerance, int connectivity);

// Seeds on the rater's most conspicuous noticed lesions (RegionGrowOptions), grows each, and
// marks the union (PartialMaskCode); everything else stays unmarked.
Label make_partial_mask(const Subject& subject, const RaterOptions& rater, RandomStream& random);

}  // namespace frugal
