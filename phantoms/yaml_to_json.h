#pragma once
// Converts a YAML tree to JSON for manifests (numbers stay numbers, booleans stay booleans).

#include <nlohmann/json.hpp>
#include <yaml-cpp/yaml.h>

namespace frugal {

nlohmann::json yaml_to_json(const YAML::Node& node);

}  // namespace frugal
