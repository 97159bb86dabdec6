#pragma once
// The pictures a cell keeps for its report: one held-out test subject (image, exact lesion mask,
// the model's map) and the first label the cell bought (its image and the label drawn as a map).
// 2D slices: the reference slice of a 3D subject.

#include <vector>

#include "corruptors/label.h"
#include "experiments/learn/learner.h"
#include "experiments/study/map_kind.h"
#include "experiments/store/results_store.h"
#include "phantoms/subject.h"

namespace frugal::study {

// The first subject (in order) whose truth holds a lesion voxel on its reference slice, else 0,
// so the pictures show what the strategy is asked to find.
std::size_t example_subject(const std::vector<const Subject*>& subjects);

// Pictures of a test subject and its prediction; no prediction picture when the map is empty
// (scalar strategies).
std::vector<store::ExampleMap> test_example_maps(const Subject& subject, const learn::Prediction& prediction,
                                                 learn::Strategy strategy);

// Pictures of a bought label on its subject's image: masks and clicks become a map; a count,
// grade or presence has no map and is named in the image's caption instead.
std::vector<store::ExampleMap> label_example_maps(const Subject& subject, const Label& label);

}  // namespace frugal::study
