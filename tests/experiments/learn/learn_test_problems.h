#pragma once
// Small fixed problems for the learning tests: phantoms drawn by generate_subject, labels bought
// from a careful rater through make_label. Truth is used only to score predictions.

#include <cstdint>
#include <vector>

#include "corruptors/labeler.h"
#include "experiments/learn/learner.h"
#include "phantoms/phantom.h"
#include "phantoms/scenario.h"

namespace frugal::learn::testing {

inline ScenarioOptions small_scenario(Family family, int side) {
  ScenarioOptions scenario = default_scenario(family);
  scenario.name = "learn-test";
  scenario.geometry.dims = 2;
  scenario.geometry.size_2d = {side, side};
  return scenario;
}

// A careful rater: notices nearly every lesion, never slips or confuses look-alikes, outlines
// exactly, grades with the default bins and no perception noise.
inline RaterOptions careful_rater() {
  RaterOptions rater;
  rater.name = "careful";
  rater.detection.size50_mm = 1.0;
  rater.detection.contrast50 = 0.05;
  rater.detection.lapse = 0.0;
  rater.detection.dot_confusion = 0.0;
  rater.detection.line_confusion = 0.0;
  rater.counting.slip_probability = 0.0;
  rater.grading.perception_sd = 0.0;
  rater.outline.displacement_sd_mm = 0.0;
  rater.outline.protrusion_rate = 0.0;
  rater.outline.hole_rate = 0.0;
  rater.outline.spurious_rate = 0.0;
  return rater;
}

inline std::vector<Subject> draw_subjects(const ScenarioOptions& scenario, std::uint64_t seed, int first, int count) {
  std::vector<Subject> subjects;
  for (int i = first; i < first + count; ++i) subjects.push_back(generate_subject(scenario, seed, i));
  return subjects;
}

inline std::vector<Label> buy_labels(const std::vector<Subject>& subjects, LabelKind kind, const RaterOptions& rater,
                                     std::uint64_t seed) {
  std::vector<Label> labels;
  LabelRequest request;
  request.kind = kind;
  for (const Subject& subject : subjects) labels.push_back(make_label(subject, rater, request, seed));
  return labels;
}

// The only way data reaches a learner: images and bought labels.
inline TrainingSet training_set(const std::vector<Subject>& subjects, const std::vector<Label>& labels) {
  TrainingSet set;
  for (std::size_t i = 0; i < subjects.size(); ++i) set.add(subjects[i].image, labels[i]);
  return set;
}

inline std::vector<FloatImage> images_of(const std::vector<Subject>& subjects) {
  std::vector<FloatImage> images;
  for (const Subject& subject : subjects) images.push_back(subject.image);
  return images;
}

}  // namespace frugal::learn::testing
