#include "experiments/study/example_maps.h"

#include <cmath>
#include <cstdio>
#include <string>

namespace frugal::study {

namespace {

int slice_of(const Subject& subject) { return subject.image.shape().z > 1 ? subject.truth.reference_slice : 0; }

template <class Voxel, class Convert>
store::ExampleMap slice_map(const Image<Voxel>& image, int z, Convert convert) {
  store::ExampleMap map;
  map.width = image.shape().x;
  map.height = image.shape().y;
  const Voxel* voxels = image.slice(z);
  map.pixels.reserve(static_cast<std::size_t>(map.width) * static_cast<std::size_t>(map.height));
  for (int i = 0; i < map.width * map.height; ++i) map.pixels.push_back(convert(voxels[i]));
  return map;
}

store::ExampleMap image_map(const Subject& subject, const std::string& role, const std::string& caption) {
  store::ExampleMap map = slice_map(subject.image, slice_of(subject), [](float v) { return std::isfinite(v) ? v : 0.0F; });
  map.role = role;
  map.subject = subject.truth.subject;
  map.caption = caption;
  map.scale = "grey";
  return map;
}

// Whole numbers as such, others to one decimal: a caption under a 192-pixel tile.
std::string number_text(double value) {
  char buffer[32];
  const bool whole = std::abs(value - std::round(value)) < 1e-9;
  std::snprintf(buffer, sizeof buffer, whole ? "%.0f" : "%.1f", value);
  return buffer;
}

std::string lesions_text(int count) { return std::to_string(count) + (count == 1 ? " lesion" : " lesions"); }

}  // namespace

std::size_t example_subject(const std::vector<const Subject*>& subjects) {
  for (std::size_t i = 0; i < subjects.size(); ++i) {
    const Subject& subject = *subjects[i];
    const std::uint8_t* labels = subject.labels.slice(slice_of(subject));
    for (int v = 0; v < subject.labels.shape().x * subject.labels.shape().y; ++v)
      if (labels[v] == kLesion) return i;
  }
  return 0;
}

std::vector<store::ExampleMap> test_example_maps(const Subject& subject, const learn::Prediction& prediction,
                                                 learn::Strategy strategy) {
  std::vector<store::ExampleMap> maps;
  maps.push_back(image_map(subject, "test_image", "held-out image"));
  store::ExampleMap truth =
      slice_map(subject.labels, slice_of(subject), [](std::uint8_t code) { return code == kLesion ? 1.0F : 0.0F; });
  truth.role = "test_truth";
  truth.subject = subject.truth.subject;
  truth.caption = "truth: " + lesions_text(subject.image.shape().z > 1 ? subject.truth.count_reference_slice : subject.truth.count);
  truth.scale = "probability";
  maps.push_back(std::move(truth));
  if (!prediction.map.empty() && prediction.map.shape() == subject.image.shape()) {
    const bool probability = map_is_probability(strategy);
    store::ExampleMap predicted = slice_map(prediction.map, slice_of(subject), [](float v) { return std::isfinite(v) ? v : 0.0F; });
    predicted.role = "prediction";
    predicted.subject = subject.truth.subject;
    predicted.caption = (probability ? "predicted probability" : "predicted map") +
                        (std::isnan(prediction.count) ? std::string() : ", count " + number_text(prediction.count));
    predicted.scale = probability ? "probability" : "grey";
    maps.push_back(std::move(predicted));
  }
  return maps;
}

std::vector<store::ExampleMap> label_example_maps(const Subject& subject, const Label& label) {
  const std::string kind = to_string(label.kind);
  std::string caption = "bought " + kind + " label";
  if (label.kind == LabelKind::count) caption = "count label: " + number_text(label.value) + (label.capped ? " or more" : "");
  if (label.kind == LabelKind::grade) caption = "grade label: bin " + number_text(label.value);
  if (label.kind == LabelKind::presence) caption = std::string("presence label: ") + (label.value > 0.5 ? "yes" : "no");
  std::vector<store::ExampleMap> maps{image_map(subject, "label_image", caption)};
  const int z = slice_of(subject);
  store::ExampleMap drawn;
  if (!label.mask.empty() && label.mask.shape() == subject.image.shape()) {
    drawn = slice_map(label.mask, z, [](std::uint8_t code) { return code == kMarkedLesion ? 1.0F : 0.0F; });
  } else if (label.kind == LabelKind::points) {
    const Shape shape = subject.image.shape();
    drawn = slice_map(subject.image, z, [](float) { return 0.0F; });
    for (const Click& click : label.clicks) {
      const std::array<double, 3> index = subject.image.geometry().continuous_index(click.position_mm);
      const long cx = std::lround(index[0]), cy = std::lround(index[1]), cz = std::lround(index[2]);
      if (shape.z > 1 && cz != z) continue;
      for (long y = cy - 1; y <= cy + 1; ++y)
        for (long x = cx - 1; x <= cx + 1; ++x)
          if (x >= 0 && y >= 0 && x < shape.x && y < shape.y)
            drawn.pixels[static_cast<std::size_t>(y * shape.x + x)] = 1.0F;
    }
  } else {
    return maps;
  }
  drawn.role = "label";
  drawn.subject = subject.truth.subject;
  drawn.caption = label.kind == LabelKind::points ? std::to_string(label.clicks.size()) + " clicks"
                                                    : (label.kind == LabelKind::outline ? "outline" : "marked voxels");
  drawn.scale = "probability";
  maps.push_back(std::move(drawn));
  return maps;
}

}  // namespace frugal::study
