#pragma once
// Scenario files: YAML in, validated ScenarioOptions out; and the resolved scenario back to YAML,
// so that every output can record exactly what generated it. Keys: docs/scenarios.md.

#include <string>

#include <yaml-cpp/yaml.h>

#include "phantoms/scenario.h"

namespace frugal {

// Throws UserError naming the file, line, key and what is allowed.
ScenarioOptions read_scenario_file(const std::string& file);
ScenarioOptions read_scenario(const YAML::Node& root, const std::string& file);

// Every option, defaults included; read_scenario() of the result gives the same options.
std::string scenario_to_yaml(const ScenarioOptions& options);

}  // namespace frugal
