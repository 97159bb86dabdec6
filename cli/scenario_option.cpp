#include "cli/scenario_option.h"

#include "phantoms/scenario_yaml.h"
#include "phantoms/user_error.h"

namespace frugal::cli {

ScenarioOptions read_scenario_with_dims(const std::string& file, int dims) {
  ScenarioOptions scenario = read_scenario_file(file);
  if (dims == 0) return scenario;
  if (dims != 2 && dims != 3) throw UserError("--dims is " + std::to_string(dims) + "; allowed 2 or 3");
  scenario.geometry.dims = dims;
  if (std::string error = scenario.validate(); !error.empty())
    throw UserError(file + " with --dims " + std::to_string(dims) + ": " + error + " (see docs/scenarios.md)");
  return scenario;
}

}  // namespace frugal::cli
