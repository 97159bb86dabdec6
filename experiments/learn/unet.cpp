#include <cmath>
#include <memory>
#include <string>

#include "experiments/learn/network_internal.h"
#include "experiments/learn/unet_internal.h"

namespace frugal::learn::internal {
namespace {

torch::nn::Sequential conv_block(int dims, int in, int out, Normalization normalization) {
  const bool bias = normalization == Normalization::none;  // a norm's shift makes a bias redundant
  torch::nn::Sequential block;
  for (int layer = 0; layer < 2; ++layer) {
    const int from = layer == 0 ? in : out;
    if (dims == 2) {
      block->push_back(torch::nn::Conv2d(torch::nn::Conv2dOptions(from, out, 3).padding(1).bias(bias)));
      if (normalization == Normalization::batch) block->push_back(torch::nn::BatchNorm2d(out));
      if (normalization == Normalization::instance)
        block->push_back(torch::nn::InstanceNorm2d(torch::nn::InstanceNorm2dOptions(out).affine(true)));
    } else {
      block->push_back(torch::nn::Conv3d(torch::nn::Conv3dOptions(from, out, 3).padding(1).bias(bias)));
      if (normalization == Normalization::batch) block->push_back(torch::nn::BatchNorm3d(out));
      if (normalization == Normalization::instance)
        block->push_back(torch::nn::InstanceNorm3d(torch::nn::InstanceNorm3dOptions(out).affine(true)));
    }
    block->push_back(torch::nn::ReLU(torch::nn::ReLUOptions().inplace(true)));
  }
  return block;
}

}  // namespace

UNetImpl::UNetImpl(const UNetOptions& options) : options_(options) {
  const int dims = options.dims();
  FRUGAL_CHECK(dims == 2 || dims == 3);
  FRUGAL_CHECK(options.depth() >= 1 && options.width() >= 1);
  const int depth = options.depth();
  const auto channels = [&](int level) { return options.width() << level; };
  for (int level = 0; level < depth; ++level) {
    const int in = level == 0 ? options.in_channels() : channels(level - 1);
    down_.push_back(register_module("down" + std::to_string(level),
                                    conv_block(dims, in, channels(level), options.normalization())));
  }
  // up_[level] joins level + 1 (upsampled) with the skip of `level`.
  for (int level = 0; level + 1 < depth; ++level)
    up_.push_back(register_module("up" + std::to_string(level), conv_block(dims, channels(level + 1) + channels(level),
                                                                           channels(level), options.normalization())));
  std::vector<std::int64_t> head_shape{options.map_channels(), options.width(), 1, 1};
  if (dims == 3) head_shape.push_back(1);
  // PyTorch's default convolution initialisation bound, 1 / sqrt(fan_in), for a 1x1 kernel.
  const double bound = 1.0 / std::sqrt(static_cast<double>(options.width()));
  head_weight_ = register_parameter("head_weight", torch::empty(head_shape).uniform_(-bound, bound));
  head_bias_ = register_parameter("head_bias", torch::empty({options.map_channels()}).uniform_(-bound, bound));
  // Prior-probability initialisation of the map's bias (Lin et al. 2017, focal loss, section 4.1):
  // sigmoid(bias) = 0.01, a rare foreground, so the first steps are not spent pulling a map that
  // starts at 0.5 everywhere down to the background. The uniform draw above is kept so that the
  // weights drawn after it do not change. Strategies with their own prior set it again
  // (set_map_bias).
  {
    torch::NoGradGuard no_grad;
    head_bias_.fill_(std::log(0.01 / 0.99));
  }
  scalar_head_ = register_module("scalar_head", torch::nn::Linear(channels(depth - 1), 1));
}

UNetOutput UNetImpl::forward(const torch::Tensor& input) {
  const int dims = options_.dims();
  const int depth = options_.depth();
  std::vector<torch::Tensor> skips;
  torch::Tensor x = input;
  for (int level = 0; level < depth; ++level) {
    if (level > 0) x = dims == 2 ? torch::max_pool2d(x, {2, 2}) : torch::max_pool3d(x, {2, 2, 2});
    x = down_[static_cast<std::size_t>(level)]->forward(x);
    skips.push_back(x);
  }
  std::vector<std::int64_t> spatial_dims{2, 3};
  if (dims == 3) spatial_dims.push_back(4);
  torch::Tensor scalar = scalar_head_->forward(x.mean(spatial_dims)).squeeze(1);
  for (int level = depth - 2; level >= 0; --level) {
    const torch::Tensor& skip = skips[static_cast<std::size_t>(level)];
    const auto size = skip.sizes().slice(2).vec();
    x = torch::nn::functional::interpolate(
        x, torch::nn::functional::InterpolateFuncOptions().size(size).mode(torch::kNearest));
    x = up_[static_cast<std::size_t>(level)]->forward(torch::cat({x, skip}, 1));
  }
  torch::Tensor map =
      dims == 2 ? torch::conv2d(x, head_weight_, head_bias_) : torch::conv3d(x, head_weight_, head_bias_);
  return {map, scalar};
}

torch::MemoryFormat channels_last_format(int dims) {
  return dims == 2 ? torch::MemoryFormat::ChannelsLast : torch::MemoryFormat::ChannelsLast3d;
}

void to_channels_last(torch::nn::Module& module, int dims) {
  const auto format = channels_last_format(dims);
  const auto rank = static_cast<std::int64_t>(dims + 2);
  torch::NoGradGuard no_grad;
  for (auto& parameter : module.parameters())
    if (parameter.dim() == rank) parameter.set_data(parameter.contiguous(format));
  for (auto& buffer : module.buffers())
    if (buffer.dim() == rank) buffer.set_data(buffer.contiguous(format));
}

}  // namespace frugal::learn::internal

// --- The U-net behind the Network interface -------------------------------------------------

namespace frugal::learn::internal {
namespace {

class UNetNetwork : public Network {
 public:
  UNetNetwork(int dims, int width, int depth, Normalization normalization, bool channels_last)
      : net_(UNetOptions(dims).width(width).depth(depth).normalization(normalization)),
        dims_(dims),
        channels_last_(channels_last) {
    if (channels_last_) to_channels_last(*net_, dims_);
  }
  NetworkOutput forward(const torch::Tensor& input) override {
    UNetOutput output = net_->forward(input);
    return {output.map, output.scalar};
  }
  std::vector<torch::Tensor> parameters() override { return net_->parameters(); }
  NamedTensors state() override {
    NamedTensors state;
    for (const auto& item : net_->named_parameters()) state.emplace_back(item.key(), item.value().detach().clone());
    for (const auto& item : net_->named_buffers()) state.emplace_back(item.key(), item.value().detach().clone());
    return state;
  }
  void restore(const NamedTensors& state) override {
    torch::NoGradGuard no_grad;
    auto parameters = net_->named_parameters();
    auto buffers = net_->named_buffers();
    for (const auto& [name, value] : state) {
      if (torch::Tensor* parameter = parameters.find(name))
        parameter->copy_(value);
      else if (torch::Tensor* buffer = buffers.find(name))
        buffer->copy_(value);
      else
        FRUGAL_CHECK(false);
    }
  }
  void set_training(bool training) override { net_->train(training); }
  bool has_scalar_head() const override { return true; }
  bool set_map_bias(double value) override {
    torch::NoGradGuard no_grad;
    net_->map_bias().fill_(value);
    return true;
  }
  void save(std::ostream& out, const std::string& meta_json) override { save_archive(out, meta_json, net_.get()); }
  void load(torch::serialize::InputArchive& archive) {
    net_->load(archive);
    if (channels_last_) to_channels_last(*net_, dims_);
  }

 private:
  UNet net_;
  int dims_;
  bool channels_last_;
};

}  // namespace

void save_archive(std::ostream& out, const std::string& meta_json, torch::nn::Module* module) {
  torch::serialize::OutputArchive archive;
  if (module != nullptr) module->save(archive);
  const auto bytes = static_cast<std::int64_t>(meta_json.size());
  archive.write("frugal.meta", torch::from_blob(const_cast<char*>(meta_json.data()), {bytes}, torch::kUInt8).clone());
  archive.save_to(out);
}

std::unique_ptr<Network> make_unet_network(int dims, int width, int depth, Normalization normalization,
                                           bool channels_last) {
  return std::make_unique<UNetNetwork>(dims, width, depth, normalization, channels_last);
}

std::unique_ptr<Network> load_unet_network(torch::serialize::InputArchive& archive, int dims, int width, int depth,
                                           Normalization normalization, bool channels_last) {
  auto network = std::make_unique<UNetNetwork>(dims, width, depth, normalization, channels_last);
  network->load(archive);
  return network;
}

}  // namespace frugal::learn::internal
