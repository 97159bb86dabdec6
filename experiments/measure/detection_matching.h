#pragma once
// Lesion-wise detection scores: precision, recall and F1 over lesions rather than voxels.
//
// Matching rule: truth and predicted masks are split into connected components (same
// connectivity for both). A truth lesion and a predicted lesion may match when their
// intersection over union is at least `minimum_iou` (and they share at least one voxel).
// Pairs are matched one-to-one, greedily by descending IoU; ties go to the lower truth label,
// then the lower predicted label (labels follow memory order, so the result is deterministic).
// Matched pairs are true positives, unmatched truth lesions false negatives, unmatched
// predictions false positives. With no truth lesions recall is 1; with no predictions precision
// is 1; F1 = 2TP / (2TP + FP + FN), and 1 when both masks are empty.

#include <string>
#include <vector>

#include "experiments/measure/connected_components.h"
#include "phantoms/image.h"

namespace frugal::measure {

struct DetectionMatchingOptions {
  ConnectivityOptions connectivity;  // full (8 / 26) by default
  double minimum_iou = 0.1;          // a loose match: lesions are small and outlines disagree
  std::string validate(int dims) const;  // empty when valid
};

struct LesionMatch {
  int truth_label = 0;
  int predicted_label = 0;
  double iou = 0.0;
};

struct DetectionResult {
  int truth_lesions = 0;
  int predicted_lesions = 0;
  int true_positives = 0;
  int false_positives = 0;
  int false_negatives = 0;
  double precision = 1.0;
  double recall = 1.0;
  double f1 = 1.0;
  std::vector<LesionMatch> matches;  // in matching order
};

// Throws UserError when the masks differ in shape or the options are invalid.
DetectionResult match_detections(const Image<std::uint8_t>& truth, const Image<std::uint8_t>& predicted,
                                 const DetectionMatchingOptions& options = {});

}  // namespace frugal::measure
