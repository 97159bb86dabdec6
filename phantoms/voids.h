#pragma once
// The voids family: a lung-like field in Hounsfield units (air -1000, water 0) with textured
// parenchyma holding one low-density region per subject in one of four spatial patterns.

#include <cstdint>

#include "phantoms/scenario.h"
#include "phantoms/subject.h"

namespace frugal {

Subject generate_voids(const ScenarioOptions& scenario, std::uint64_t seed, int subject, int rescan);

// Fraction of field voxels (label >= kField) strictly below threshold_hu.
double densitometry(const FloatImage& image, const LabelImage& labels, double threshold_hu);

}  // namespace frugal
