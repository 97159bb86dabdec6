#include "phantoms/phantom.h"

#include "phantoms/acquisition.h"
#include "phantoms/streaks.h"
#include "phantoms/voids.h"

namespace frugal {

namespace {

Subject generate_streaks(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan) {
  Confounder confounder;
  RestSubject rest = draw_streaks_at_rest(scenario, seed, subject, confounder);
  pose_and_draw_objects(rest, rescan_pose(scenario, seed, subject, rescan), 0.0F);
  Subject result;
  result.truth = std::move(rest.truth);
  result.truth.subject = subject;
  result.truth.rescan = rescan;
  const int depth = rest.signal.shape().z;
  const int reference_slice =
      depth == 1 ? 0 : (scenario.geometry.reference_slice >= 0 ? scenario.geometry.reference_slice : depth / 2);
  result.labels = finish_truth(rest, result.truth, reference_slice);
  RandomStream noise(seed, static_cast<std::uint64_t>(subject), StreamPurpose::noise, static_cast<std::uint64_t>(rescan));
  acquire(rest.signal, scenario, confounder.gain, noise);
  result.image = std::move(rest.signal);
  return result;
}

}  // namespace

Subject generate_subject(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan) {
  FRUGAL_CHECK(scenario.validate().empty());
  FRUGAL_CHECK(subject >= 0 && rescan >= 0);
  return scenario.family == Family::streaks ? generate_streaks(scenario, seed, subject, rescan)
                                            : generate_voids(scenario, seed, subject, rescan);
}

std::string to_string(ObjectKind kind) {
  switch (kind) {
    case ObjectKind::lesion: return "lesion";
    case ObjectKind::dot_distractor: return "dot";
    case ObjectKind::line_distractor: return "line";
  }
  return "lesion";
}

}  // namespace frugal
