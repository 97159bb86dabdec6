#pragma once
// The streaks family: a brain-like MR field (smooth tissue classes, multiplicative bias field)
// holding small elongated bright lesions and look-alike distractors (round dots, long thin
// vessel-like lines), with Rician noise.

#include <cstdint>

#include "phantoms/acquisition.h"
#include "phantoms/scenario.h"

namespace frugal {

RestSubject draw_streaks_at_rest(const ScenarioOptions& scenario, std::uint64_t seed, int subject, Confounder& confounder);

}  // namespace frugal
