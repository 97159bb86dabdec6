#pragma once
// Study files: YAML in, a validated StudyOptions out. Every key is documented in docs/studies.md;
// every error names the file, the line, the key path and what is allowed.

#include <string>

#include <yaml-cpp/yaml.h>

#include "experiments/study/study.h"

namespace frugal::study {

// Scenario and rater files named in the study are read relative to the study file's folder.
StudyOptions read_study_file(const std::string& file);
// `folder` is where relative scenario and rater paths are taken from.
StudyOptions read_study(const YAML::Node& root, const std::string& file, const std::string& folder);

}  // namespace frugal::study
