#pragma once
// The scenario file plus the command line's --dims override, shared by every command that draws
// subjects.

#include <string>

#include "phantoms/scenario.h"

namespace frugal::cli {

// Reads and validates the scenario; `dims` 0 keeps the file's geometry.dims, 2 or 3 overrides it.
ScenarioOptions read_scenario_with_dims(const std::string& file, int dims);

}  // namespace frugal::cli
