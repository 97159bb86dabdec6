#include "experiments/baselines/threshold.h"

#include <cmath>
#include <cstdint>
#include <sstream>

#include "phantoms/user_error.h"

namespace frugal::baselines {

std::string ThresholdOptions::validate() const {
  if (!std::isfinite(threshold_hu)) {
    std::ostringstream message;
    message << "threshold.threshold_hu: " << threshold_hu << " is not allowed; use a finite value in HU (e.g. -950)";
    return message.str();
  }
  return "";
}

namespace {

void check_options(const ThresholdOptions& options) {
  const std::string problem = options.validate();
  if (!problem.empty()) throw UserError(problem);
}

ThresholdResult count_below(const FloatImage& image, const std::uint8_t* field, const ThresholdOptions& options) {
  ThresholdResult result;
  result.below = LabelImage(image.geometry(), 0);
  const auto threshold = static_cast<float>(options.threshold_hu);
  const float* voxels = image.data();
  std::uint8_t* below = result.below.data();
  for (std::size_t v = 0; v < image.size(); ++v) {
    if (field != nullptr && field[v] == 0) continue;
    ++result.field_count;
    if (voxels[v] < threshold) {
      below[v] = 1;
      ++result.below_count;
    }
  }
  result.fraction =
      result.field_count > 0 ? static_cast<double>(result.below_count) / static_cast<double>(result.field_count) : 0.0;
  return result;
}

}  // namespace

ThresholdResult threshold_densitometry(const FloatImage& image, const LabelImage& field,
                                       const ThresholdOptions& options) {
  check_options(options);
  if (field.shape() != image.shape()) {
    std::ostringstream message;
    message << "threshold: the field mask is " << field.shape().x << "x" << field.shape().y << "x" << field.shape().z
            << " voxels but the image is " << image.shape().x << "x" << image.shape().y << "x" << image.shape().z
            << "; the mask must have the image's grid";
    throw UserError(message.str());
  }
  return count_below(image, field.data(), options);
}

ThresholdResult threshold_densitometry(const FloatImage& image, const ThresholdOptions& options) {
  check_options(options);
  return count_below(image, nullptr, options);
}

}  // namespace frugal::baselines
