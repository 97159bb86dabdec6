#pragma once
// A TrainingSet from files: a phantom set folder's images and the label sets bought for them
// (frugal phantoms, frugal labels). frugal train is this plus learn::train; a study's cell builds
// its TrainingSet from subjects in memory instead, with the same TrainingSet rules. Torch-free.

#include <string>
#include <vector>

#include "corruptors/label_set_reader.h"
#include "experiments/learn/learner.h"
#include "phantoms/phantom_set_reader.h"

namespace frugal::learn {

struct FileTrainingSet {
  TrainingSet set;
  int unlabelled = 0;  // phantom-set subjects nobody labelled, added for consistency training
};

// One sample per label (an image labelled by two raters is added twice), each image read once.
// Learned strategies: the labels' images, plus every unlabelled subject of the phantom set when
// options.consistency_weight > 0. Classical strategies learn nothing: one image, for the grid.
// Moves the labels out of `label_sets`. Throws UserError naming the label set, subject and image
// when a mask was drawn on another grid.
FileTrainingSet training_set_from_files(const PhantomSetIndex& phantoms, std::vector<LabelSet>& label_sets,
                                        const TrainOptions& options);

// The field affected fractions refer to for a phantom set: its family's (default_field_for_family),
// the whole image for an empty set. Throws UserError when the set mixes families.
FieldOptions field_for_phantom_set(const PhantomSetIndex& phantoms);

}  // namespace frugal::learn
