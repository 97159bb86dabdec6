#include "experiments/measure/detection_matching.h"

#include <algorithm>
#include <map>
#include <sstream>
#include <utility>

#include "phantoms/user_error.h"

namespace frugal::measure {

std::string DetectionMatchingOptions::validate(int dims) const {
  if (std::string problem = connectivity.validate(dims); !problem.empty()) return problem;
  if (!(minimum_iou > 0.0 && minimum_iou <= 1.0)) {
    std::ostringstream message;
    message << "minimum_iou is " << minimum_iou << "; allowed: greater than 0 and at most 1";
    return message.str();
  }
  return {};
}

DetectionResult match_detections(const Image<std::uint8_t>& truth, const Image<std::uint8_t>& predicted,
                                 const DetectionMatchingOptions& options) {
  if (truth.shape() != predicted.shape()) {
    throw UserError("truth and predicted masks differ in shape; lesion matching needs the same grid");
  }
  if (const std::string problem = options.validate(truth.shape().dims()); !problem.empty()) {
    throw UserError(problem);
  }
  const ComponentLabels truth_labels = label_components(truth, options.connectivity);
  const ComponentLabels predicted_labels = label_components(predicted, options.connectivity);

  // Intersection voxel counts per (truth, predicted) pair that touch at all.
  std::map<std::pair<int, int>, std::size_t> intersections;
  for (std::size_t i = 0; i < truth.size(); ++i) {
    const int t = truth_labels.labels.voxels()[i];
    const int p = predicted_labels.labels.voxels()[i];
    if (t > 0 && p > 0) ++intersections[{t, p}];
  }
  std::vector<LesionMatch> candidates;
  for (const auto& [pair, shared] : intersections) {
    const std::size_t truth_size = truth_labels.sizes[static_cast<std::size_t>(pair.first) - 1];
    const std::size_t predicted_size = predicted_labels.sizes[static_cast<std::size_t>(pair.second) - 1];
    const double iou = static_cast<double>(shared) / static_cast<double>(truth_size + predicted_size - shared);
    if (iou >= options.minimum_iou) candidates.push_back({pair.first, pair.second, iou});
  }
  std::sort(candidates.begin(), candidates.end(), [](const LesionMatch& a, const LesionMatch& b) {
    if (a.iou != b.iou) return a.iou > b.iou;
    if (a.truth_label != b.truth_label) return a.truth_label < b.truth_label;
    return a.predicted_label < b.predicted_label;
  });

  DetectionResult result;
  result.truth_lesions = truth_labels.count;
  result.predicted_lesions = predicted_labels.count;
  std::vector<bool> truth_used(static_cast<std::size_t>(truth_labels.count) + 1, false);
  std::vector<bool> predicted_used(static_cast<std::size_t>(predicted_labels.count) + 1, false);
  for (const LesionMatch& candidate : candidates) {
    const auto t = static_cast<std::size_t>(candidate.truth_label);
    const auto p = static_cast<std::size_t>(candidate.predicted_label);
    if (truth_used[t] || predicted_used[p]) continue;
    truth_used[t] = predicted_used[p] = true;
    result.matches.push_back(candidate);
  }
  result.true_positives = static_cast<int>(result.matches.size());
  result.false_negatives = result.truth_lesions - result.true_positives;
  result.false_positives = result.predicted_lesions - result.true_positives;
  const double tp = result.true_positives;
  if (result.predicted_lesions > 0) result.precision = tp / result.predicted_lesions;
  if (result.truth_lesions > 0) result.recall = tp / result.truth_lesions;
  const int denominator = 2 * result.true_positives + result.false_positives + result.false_negatives;
  if (denominator > 0) result.f1 = 2.0 * tp / denominator;
  return result;
}

}  // namespace frugal::measure
