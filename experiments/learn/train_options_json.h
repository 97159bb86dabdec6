#pragma once
// TrainOptions as JSON and back, complete: every field, so that a model sidecar, a study's cell
// key and a stored cell all describe the same training exactly. Torch-free.
//
// JSON has no infinity: an open field bound is written as null and read back as +-infinity.

#include <nlohmann/json.hpp>
#include <string>

#include "experiments/learn/learner.h"

namespace frugal::learn {

nlohmann::json to_json(const TrainOptions& options);

// Reads the keys present in `json` over `options` (absent keys keep their value). Throws
// UserError "<path>.<key>: <what is wrong>; allowed: ..." for an unknown key, a wrong type or a
// value out of range, with `path` prefixed to the key path (e.g. "training").
void update_from_json(const nlohmann::json& json, TrainOptions& options, const std::string& path = "train");

}  // namespace frugal::learn
