#pragma once
// One label bought from one rater for one subject: what a study pays for and a learner sees.
// It never holds truth: scalar values, clicks and masks are the rater's (imperfect) answer.

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include "phantoms/image.h"

namespace frugal {

enum class LabelKind { presence, count, grade, points, partial_mask, outline };
std::string to_string(LabelKind kind);
// Throws UserError listing the allowed names.
LabelKind label_kind_from_string(const std::string& name);

// Where a count is taken: the whole image, the reference slice of a 3D subject (truth's
// reference_slice), or one half of the field split at world x = 0 (a per-region count).
enum class CountScope { image, reference_slice, left_half, right_half };
std::string to_string(CountScope scope);
CountScope count_scope_from_string(const std::string& name);  // throws UserError

// Values of a partial (region-grown) mask: marked lesion, and unmarked (which means "not looked
// at", not "background"). Outlines use 0 background and 1 lesion.
enum PartialMaskCode : std::uint8_t { kUnmarked = 0, kMarkedLesion = 1 };

struct Click {
  std::array<double, 3> position_mm{};  // world coordinates of the click
};

struct Label {
  int subject = 0;
  int rescan = 0;
  int rater = 0;
  LabelKind kind = LabelKind::count;
  double cost_seconds = 0.0;  // annotator time for this label (cost model of the rater)

  // presence: 0 or 1; count: the count (capped counts hold the cap value); grade: the bin index.
  double value = 0.0;
  bool capped = false;           // count: the rater answered "more than cap"
  std::vector<Click> clicks;     // points
  LabelImage mask;               // partial_mask (PartialMaskCode) or outline (0/1)
};

}  // namespace frugal
