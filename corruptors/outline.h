#pragma once
// Noisy outlines: the rater's dense lesion mask (OutlineOptions): noticed lesions deformed by a
// smooth random displacement field (applied with cv::remap), a dilation or erosion bias,
// protrusions and holes; missed lesions are absent and spurious blobs appear.

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/random.h"
#include "phantoms/subject.h"

namespace frugal {

Label make_outline(const Subject& subject, const RaterOptions& rater, RandomStream& random);

}  // namespace frugal
