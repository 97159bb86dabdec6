#pragma once
// What a strategy's map means, for scoring, pictures and predictions tables: one rule shared by
// run_cell, the report's panels and frugal predict (learner.h's prediction rules).

#include "experiments/learn/learner.h"
#include "experiments/scoring/predictions_table.h"

namespace frugal::study {

// count-map a density, line-filter a filter response, every other map strategy (and threshold's
// 0/1 mask) a lesion probability; strategies without a map none.
scoring::MapKind map_kind_of(learn::Strategy strategy);

// map_kind_of(strategy) == probability: scored for overlap and shown on the probability scale.
// Other maps are shown stretched to their own range.
bool map_is_probability(learn::Strategy strategy);

}  // namespace frugal::study
