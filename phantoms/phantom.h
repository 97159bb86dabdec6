#pragma once
// The entry point of the phantoms part: one subject of a scenario, drawn from
// (seed, subject index, rescan) alone, so any subject can be regenerated on its own, in any order
// and on any thread.

#include <cstdint>

#include "phantoms/scenario.h"
#include "phantoms/subject.h"

namespace frugal {

// rescan 0 is the first acquisition; rescan r > 0 has the same anatomy and objects, a new small
// rigid pose (scenario.rescan limits) and new noise. The scenario must be valid.
Subject generate_subject(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan = 0);

}  // namespace frugal
