// A user's ratings table (experiments/measure/ratings_table.h), wide or long.
#include <sstream>

#include "experiments/measure/ratings_table.h"
#include "fuzz/fuzz_input.h"
#include "phantoms/user_error.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  std::istringstream input(frugal::fuzz::as_text(data, size));
  try {
    const auto table = frugal::measure::parse_ratings_table(input, "fuzz.csv");
    for (int subject = 0; subject < static_cast<int>(table.subjects.size()); ++subject)
      for (int rater = 0; rater < static_cast<int>(table.raters.size()); ++rater) table.where(subject, rater);
  } catch (const frugal::UserError&) {
  }
  return 0;
}
