// Study files (experiments/study/study_yaml.h) through the strict YAML path that files take.
// Scenario and rater files named in a study are looked up in an empty folder, so only inline
// content is read.
#include <filesystem>

#include "experiments/study/study_yaml.h"
#include "fuzz/fuzz_input.h"
#include "phantoms/user_error.h"
#include "phantoms/yaml_fields.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const std::string folder = [] {
    const std::string path = frugal::fuzz::scratch_path("-study");
    std::filesystem::create_directories(path);
    return path;
  }();
  try {
    frugal::study::read_study(frugal::parse_yaml_text(frugal::fuzz::as_text(data, size), "fuzz.yaml"), "fuzz.yaml",
                              folder);
  } catch (const frugal::UserError&) {
  }
  return 0;
}
