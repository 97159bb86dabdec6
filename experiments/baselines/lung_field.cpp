#include "experiments/baselines/lung_field.h"

#include <cmath>

#include "experiments/measure/connected_components.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::baselines {

std::string LungFieldOptions::validate() const {
  if (!std::isfinite(air_below_hu))
    return "air_below_hu = " + format_number(air_below_hu) + ": use a finite value in HU (e.g. -400)";
  return "";
}

LabelImage lung_field_from_image(const FloatImage& image, const LungFieldOptions& options) {
  const std::string problem = options.validate();
  if (!problem.empty()) throw UserError("lung_field." + problem);
  LabelImage field(image.geometry(), 0);
  const auto cut = static_cast<float>(options.air_below_hu);
  for (std::size_t v = 0; v < image.size(); ++v) field.data()[v] = image.data()[v] < cut ? 1 : 0;
  measure::clear_border_components(field);
  return field;
}

}  // namespace frugal::baselines
