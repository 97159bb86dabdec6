#include "experiments/baselines/lung_field.h"

#include <cmath>
#include <cstdint>
#include <vector>

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
  const measure::ComponentLabels components = measure::label_components(field);
  const Shape& shape = image.shape();
  std::vector<bool> outside_air(static_cast<std::size_t>(components.count) + 1, false);
  for (int z = 0; z < shape.z; ++z)
    for (int y = 0; y < shape.y; ++y)
      for (int x = 0; x < shape.x; ++x) {
        const bool border =
            x == 0 || y == 0 || x == shape.x - 1 || y == shape.y - 1 || (shape.z > 1 && (z == 0 || z == shape.z - 1));
        if (border) outside_air[static_cast<std::size_t>(components.labels.at(x, y, z))] = true;
      }
  for (std::size_t v = 0; v < field.size(); ++v)
    if (outside_air[static_cast<std::size_t>(components.labels.data()[v])]) field.data()[v] = 0;
  return field;
}

}  // namespace frugal::baselines
