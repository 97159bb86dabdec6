#pragma once
// What a trained model holds (internal: torch types): the network, or nothing for the classical
// strategies, and everything prediction needs to read it.

#include <ATen/autocast_mode.h>
#include <torch/torch.h>

#include <memory>
#include <string>
#include <vector>

#include "experiments/learn/learner.h"
#include "experiments/learn/network_internal.h"

namespace frugal::learn {

struct TrainedModel::Impl {
  std::shared_ptr<internal::Network> network;  // null for threshold and line-filter
  // The options trained with, whole: prediction reads the network's shape, the strategy's
  // map-to-quantity rule, the grade bins and the field from here, and the checkpoint stores
  // them through their one JSON form (train_options_json.h).
  TrainOptions options;
  LabelKind kind = LabelKind::outline;  // the label kind trained on (mixed: the weak kind)
  Shape shape;
  double voxel_volume_mm3 = 1.0;  // of the training images (points' size prior)
  double input_mean = 0.0;        // images are fed as (value - input_mean) / input_scale
  double input_scale = 1.0;
  double target_mean = 0.0;  // scalar heads predict (value - target_mean) / target_scale
  double target_scale = 1.0;
};

namespace internal {

// The map's activation: softplus density for count-map, sigmoid probability otherwise.
torch::Tensor activate_map(const torch::Tensor& map, Strategy strategy);

// Plain floats copied into a [N, 1, spatial...] tensor in the model's memory format; the tensor
// owns its memory.
torch::Tensor voxel_tensor(std::vector<float>& values, int n, const TrainedModel::Impl& model);

// Writes (value - input_mean) / input_scale for every voxel into `out`.
void normalise_into(const FloatImage& image, const TrainedModel::Impl& model, std::vector<float>& out);

// bfloat16 autocast of the forward pass on CPU (thread-local state, restored on exit).
class CpuAutocast {
 public:
  explicit CpuAutocast(bool enabled) : enabled_(enabled) {
    if (!enabled_) return;
    previous_ = at::autocast::is_cpu_enabled();
    at::autocast::set_cpu_enabled(true);
    at::autocast::set_autocast_cpu_dtype(at::kBFloat16);
    at::autocast::increment_nesting();
  }
  ~CpuAutocast() {
    if (!enabled_) return;
    if (at::autocast::decrement_nesting() == 0) at::autocast::clear_cache();
    at::autocast::set_cpu_enabled(previous_);
  }
  CpuAutocast(const CpuAutocast&) = delete;
  CpuAutocast& operator=(const CpuAutocast&) = delete;

 private:
  bool enabled_ = false;
  bool previous_ = false;
};

// The network's output for a batch in float32, under bfloat16 autocast when the model asks.
NetworkOutput forward_float(Network& network, const torch::Tensor& input, bool bfloat16);

// predict()'s rules for a network that is not in `model` yet (training's validation pass). The
// network must be in evaluation mode; images must have the model's shape.
std::vector<Prediction> predict_with(const TrainedModel::Impl& model, Network& network,
                                     const std::vector<const FloatImage*>& images);

}  // namespace internal
}  // namespace frugal::learn
