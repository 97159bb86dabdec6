// Prediction: the quantities a study asks for, read from a trained model's map or scalar by one
// rule per strategy (learner.h), or computed by the classical baselines.
#include <torch/torch.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "experiments/baselines/line_filter.h"
#include "experiments/baselines/threshold.h"
#include "experiments/learn/grade_fraction.h"
#include "experiments/learn/learner.h"
#include "experiments/learn/model_internal.h"
#include "experiments/learn/strategy_losses_internal.h"
#include "experiments/measure/connected_components.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

std::string shape_text(const Shape& shape) {
  return std::to_string(shape.x) + "x" + std::to_string(shape.y) + "x" + std::to_string(shape.z);
}

Prediction classical_prediction(const TrainedModel::Impl& model, const FloatImage& image) {
  Prediction prediction;
  const LabelImage field = estimate_field(image, model.options.field);
  if (model.options.strategy == Strategy::threshold) {
    baselines::ThresholdOptions threshold;
    threshold.threshold_hu = model.options.threshold_hu;
    const baselines::ThresholdResult result = baselines::threshold_densitometry(image, field, threshold);
    prediction.map = FloatImage(image.geometry());
    std::copy(result.below.voxels().begin(), result.below.voxels().end(), prediction.map.data());
    prediction.affected_fraction = result.fraction;
    prediction.burden_mm3 = static_cast<double>(result.below_count) * image.geometry().voxel_volume_mm3();
    return prediction;
  }
  baselines::LineCountResult result = baselines::count_lines(image, model.options.line_filter, &field);
  prediction.count = result.count;
  double volume = 0.0;
  for (const auto& component : result.components)
    if (component.counted) volume += component.volume_mm3;
  prediction.burden_mm3 = volume;
  prediction.map = std::move(result.response);
  return prediction;
}

// The map-reading rule of the segmentation-like strategies.
void read_probability_map(const TrainedModel::Impl& model, const FloatImage& image, Prediction& prediction) {
  const LabelImage field = estimate_field(image, model.options.field);
  const float* values = prediction.map.data();
  double inside = 0.0, field_voxels = 0.0, maximum = 0.0;
  LabelImage lesion(image.geometry(), 0);
  for (std::size_t v = 0; v < image.size(); ++v) {
    if (field.data()[v] == 0) continue;
    inside += values[v];
    field_voxels += 1.0;
    maximum = std::max(maximum, static_cast<double>(values[v]));
    lesion.data()[v] = values[v] > 0.5F ? 1 : 0;
  }
  prediction.affected_fraction = inside / field_voxels;
  if (std::isnan(prediction.presence_probability)) prediction.presence_probability = maximum;
  const auto components = measure::label_components(lesion);
  prediction.count = components.count;
  const auto marked = static_cast<double>(std::count(lesion.voxels().begin(), lesion.voxels().end(), std::uint8_t{1}));
  prediction.burden_mm3 = marked * image.geometry().voxel_volume_mm3();
  int grade = 0;
  for (double edge : model.options.grading.bin_edges)
    if (prediction.affected_fraction > edge) ++grade;
  prediction.grade = grade;
}

}  // namespace

namespace internal {

std::vector<Prediction> predict_with(const TrainedModel::Impl& model, Network& network,
                                     const std::vector<const FloatImage*>& images) {
  torch::NoGradGuard no_grad;
  std::vector<Prediction> predictions(images.size());
  const std::size_t voxels = model.shape.voxel_count();
  constexpr std::size_t kBatch = 16;
  for (std::size_t first = 0; first < images.size(); first += kBatch) {
    const std::size_t count = std::min(kBatch, images.size() - first);
    std::vector<float> input(count * voxels);
    std::vector<float> one;
    for (std::size_t i = 0; i < count; ++i) {
      normalise_into(*images[first + i], model, one);
      std::copy(one.begin(), one.end(), input.begin() + static_cast<std::ptrdiff_t>(i * voxels));
    }
    const NetworkOutput output =
        forward_float(network, voxel_tensor(input, static_cast<int>(count), model), model.options.bfloat16);
    if (model.options.strategy == Strategy::scalar) {
      for (std::size_t i = 0; i < count; ++i) {
        Prediction& prediction = predictions[first + i];
        const double raw = output.scalar[static_cast<std::int64_t>(i)].item<double>();
        const double value = raw * model.target_scale + model.target_mean;
        if (model.kind == LabelKind::count) prediction.count = std::max(0.0, value);
        if (model.kind == LabelKind::grade) {
          prediction.grade = std::clamp(value, 0.0, model.options.grading.bins() - 1.0);
          prediction.affected_fraction = fraction_of_grade(prediction.grade, model.options.grading);
        }
        if (model.kind == LabelKind::presence) prediction.presence_probability = 1.0 / (1.0 + std::exp(-raw));
      }
      continue;
    }
    const torch::Tensor map = activate_map(output.map, model.options.strategy).contiguous();  // x-fastest voxels
    torch::Tensor pooled;
    if (model.options.strategy == Strategy::presence_mil)
      pooled = torch::sigmoid(log_sum_exp_pool(output.map, model.options.pooling_sharpness)).contiguous();
    for (std::size_t i = 0; i < count; ++i) {
      Prediction& prediction = predictions[first + i];
      const FloatImage& image = *images[first + i];
      prediction.map = FloatImage(image.geometry());
      const float* values = map.data_ptr<float>() + i * voxels;
      std::copy(values, values + voxels, prediction.map.data());
      if (model.options.strategy == Strategy::count_map) {
        double total = 0.0;
        for (std::size_t v = 0; v < voxels; ++v) total += values[v];
        prediction.count = total;
        prediction.presence_probability = 1.0 - std::exp(-total);
        continue;
      }
      if (pooled.defined()) prediction.presence_probability = pooled[static_cast<std::int64_t>(i)].item<double>();
      read_probability_map(model, image, prediction);
    }
  }
  return predictions;
}

}  // namespace internal

std::vector<Prediction> predict(const TrainedModel& trained, const std::vector<FloatImage>& images, int threads) {
  const TrainedModel::Impl& model = trained.impl();
  if (threads < 1) throw UserError("predict: threads = " + std::to_string(threads) + ": must be at least 1");
  if (is_classical(model.options.strategy)) {
    std::vector<Prediction> predictions(images.size());
    for (std::size_t i = 0; i < images.size(); ++i) predictions[i] = classical_prediction(model, images[i]);
    return predictions;
  }
  for (std::size_t i = 0; i < images.size(); ++i)
    if (images[i].shape() != model.shape)
      throw UserError("predict: image " + std::to_string(i) + " is " + shape_text(images[i].shape()) +
                      " but the model was trained on " + shape_text(model.shape));
  torch::set_num_threads(threads);
  internal::Network& network = *model.network;
  network.set_training(false);
  std::vector<const FloatImage*> pointers;
  for (const FloatImage& image : images) pointers.push_back(&image);
  return internal::predict_with(model, network, pointers);
}

IntensityShift intensity_shift(const TrainedModel& model, const FloatImage& image) {
  IntensityShift shift;
  const TrainedModel::Impl& impl = model.impl();
  if (!impl.network || image.empty()) return shift;
  double sum = 0.0, sum_squares = 0.0;
  for (float value : image.voxels()) {
    sum += value;
    sum_squares += static_cast<double>(value) * value;
  }
  const double voxels = static_cast<double>(image.size());
  const double mean = sum / voxels;
  const double sd = std::sqrt(std::max(0.0, sum_squares / voxels - mean * mean));
  shift.mean_offset_sd = (mean - impl.input_mean) / impl.input_scale;
  shift.spread_ratio = sd / impl.input_scale;
  shift.far = !(std::abs(shift.mean_offset_sd) <= 3.0) || !(shift.spread_ratio <= 4.0 && shift.spread_ratio >= 0.25);
  return shift;
}

Prediction predict(const TrainedModel& model, const FloatImage& image, int threads) {
  return std::move(predict(model, std::vector<FloatImage>{image}, threads).front());
}

}  // namespace frugal::learn
