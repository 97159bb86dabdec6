// Rater files (corruptors/rater_yaml.h) through the strict YAML path that files take; a rater
// that reads must also read back from its resolved YAML.
#include "corruptors/rater_yaml.h"
#include "fuzz/fuzz_input.h"
#include "phantoms/user_error.h"
#include "phantoms/yaml_fields.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  frugal::RaterOptions options;
  try {
    options = frugal::read_rater(frugal::parse_yaml_text(frugal::fuzz::as_text(data, size), "fuzz.yaml"), "fuzz.yaml");
  } catch (const frugal::UserError&) {
    return 0;
  }
  // No catch here: a resolved rater that does not read back is a bug.
  frugal::read_rater(frugal::parse_yaml_text(frugal::rater_to_yaml(options), "resolved.yaml"), "resolved.yaml");
  return 0;
}
