#pragma once
// Rater files: YAML in, validated RaterOptions out; and the resolved rater back to YAML, so that
// every output can record exactly which rater model made its labels. Keys: docs/raters.md.

#include <string>

#include <yaml-cpp/yaml.h>

#include "corruptors/rater.h"

namespace frugal {

// Throws UserError naming the file, line, key and what is allowed.
RaterOptions read_rater_file(const std::string& file);
RaterOptions read_rater(const YAML::Node& root, const std::string& file);

// Every option, defaults included; read_rater() of the result gives the same options.
std::string rater_to_yaml(const RaterOptions& options);

}  // namespace frugal
