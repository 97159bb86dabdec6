// The checkpoint reader (experiments/learn, TrainedModel::load): the bytes are written to a
// scratch file and loaded.
#include "experiments/learn/learner.h"
#include "fuzz/fuzz_input.h"
#include "phantoms/user_error.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string path = frugal::fuzz::write_scratch(data, size, ".pt");
  try {
    frugal::learn::TrainedModel::load(path);
  } catch (const frugal::UserError&) {
  }
  return 0;
}
