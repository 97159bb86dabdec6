#pragma once
// frugal's small U-shaped encoder-decoder for 2D and 3D images (internal: torch types).
// Levels of Conv -> norm -> ReLU blocks (two per level), max pooling down, nearest upsampling
// and skip concatenation up; a 1x1 convolution gives the per-voxel map and global average
// pooling of the bottleneck followed by a linear layer gives the scalar. A generic design, sized
// for CPU training of small phantoms.
//
//   UNet net(UNetOptions(2).width(8).depth(3).normalization(Normalization::batch));

#include <torch/torch.h>

#include <vector>

#include "experiments/learn/learner.h"

namespace frugal::learn::internal {

struct UNetOptions {
  explicit UNetOptions(int dims) : dims_(dims) {}
  TORCH_ARG(int, dims);  // 2 or 3
  TORCH_ARG(int, in_channels) = 1;
  TORCH_ARG(int, map_channels) = 1;
  TORCH_ARG(int, width) = 8;  // channels at level 0, doubled per level
  TORCH_ARG(int, depth) = 3;  // levels, including the bottleneck
  TORCH_ARG(Normalization, normalization) = Normalization::batch;
};

struct UNetOutput {
  torch::Tensor map;     // [N, map_channels, spatial...]: raw (pre-activation) map
  torch::Tensor scalar;  // [N]: raw scalar head
};

class UNetImpl : public torch::nn::Module {
 public:
  explicit UNetImpl(const UNetOptions& options);
  UNetOutput forward(const torch::Tensor& input);
  const UNetOptions& options() const { return options_; }
  // The map head's bias, for initialising a map at a chosen value (count-map).
  torch::Tensor& map_bias() { return head_bias_; }

 private:
  UNetOptions options_;
  std::vector<torch::nn::Sequential> down_;
  std::vector<torch::nn::Sequential> up_;
  torch::Tensor head_weight_;
  torch::Tensor head_bias_;
  torch::nn::Linear scalar_head_{nullptr};
};
TORCH_MODULE(UNet);

// Converts every 4D/5D parameter and buffer to channels-last (3D: channels-last-3d) memory,
// which is what torch.nn.Module.to(memory_format=...) does.
void to_channels_last(torch::nn::Module& module, int dims);
torch::MemoryFormat channels_last_format(int dims);

}  // namespace frugal::learn::internal
