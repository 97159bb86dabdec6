#pragma once
// The model-selection criterion: how far the model's answers on the validation images are from
// the labels bought for them, in the labels' own terms (what a user would check), rather than a
// training loss whose scale swings with the batch (a density's squared count error at small n).
// train() keeps the epoch with the smallest value; ties go to the later epoch, so a criterion
// at 0 (every grade's fraction inside its bin, where the grade-bounds loss is 0 too) keeps
// training instead of stopping at the first such epoch. Torch-free.

#include <vector>

#include "corruptors/label.h"
#include "experiments/learn/learner.h"

namespace frugal::learn {

// The error of one prediction against its label:
//   outline       1 - Dice of the map above 0.5 with the outline (pooled: see below)
//   count         |predicted count - count|; a capped count only when below the cap
//   grade         scalar: |predicted grade - grade|; map strategies: the affected fraction's
//                 distance from the grade's fraction interval (constraints.h), 0 inside: a
//                 grade says nothing of where in its bin the fraction lies
//   presence      cross entropy of the presence probability with the answer
//   points        |predicted count - number of clicks| (a click marks each lesion found)
//   partial_mask  NaN: a partial mask says nothing of unmarked voxels; the loss decides
// The mean over the validation labels, per label kind; kinds (mixed: outlines and one weak
// kind) are summed. Outlines pool the Dice over images (Dice of the union), so images without
// lesions count. NaN when any label is a partial mask or there are no labels.
double validation_error(const std::vector<Prediction>& predictions, const std::vector<const Label*>& labels,
                        const TrainOptions& options);

}  // namespace frugal::learn
