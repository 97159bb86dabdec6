#pragma once
// The one entry point that buys a label: kind + subject + rater -> Label, deterministic from
// (seed, subject, rescan, rater, kind) alone.

#include <cstdint>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/subject.h"

namespace frugal {

struct LabelRequest {
  LabelKind kind = LabelKind::count;
  CountScope scope = CountScope::image;  // count only
  int rater = 0;                         // index within the panel
};

// `rater` is the panel's options; the member's own parameters are drawn with panel_member().
Label make_label(const Subject& subject, const RaterOptions& rater, const LabelRequest& request, std::uint64_t seed);

}  // namespace frugal
