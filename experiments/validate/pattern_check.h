#pragma once
// Phenomenon 8: void patterns drawn with the same densitometry are told apart by texture. The
// classical pattern classifier (experiments/baselines) is fitted on one repeat's training subjects
// with their exact pattern (a pattern rater is not part of frugal, so the labels are perfect) and
// scored on held-out subjects, against the same classifier given densitometry alone.

#include "experiments/validate/phenomena.h"

namespace frugal::validation {

RepeatOutcome pattern_separability(const CellContext& context, int repeat);

}  // namespace frugal::validation
