#pragma once
// The network a strategy trains (internal: torch types): frugal's own U-shaped network or a
// user's TorchScript module. The training loop, prediction and checkpoints see only this
// interface, so any map strategy trains either.

#include <torch/torch.h>

#include <memory>
#include <ostream>
#include <string>
#include <utility>
#include <vector>

#include "experiments/learn/learner.h"

namespace frugal::learn::internal {

struct NetworkOutput {
  torch::Tensor map;     // [N, 1, spatial...]: raw (pre-activation) map
  torch::Tensor scalar;  // [N]: raw scalar head; undefined when the network has none
};

// Parameters and buffers by name: the weights of the best epoch so far, or a checkpoint's.
using NamedTensors = std::vector<std::pair<std::string, torch::Tensor>>;

class Network {
 public:
  virtual ~Network() = default;
  virtual NetworkOutput forward(const torch::Tensor& input) = 0;
  virtual std::vector<torch::Tensor> parameters() = 0;
  // Detached clones of every parameter and buffer, and their restoration by name.
  virtual NamedTensors state() = 0;
  virtual void restore(const NamedTensors& state) = 0;
  virtual void set_training(bool training) = 0;
  virtual bool has_scalar_head() const = 0;
  // Starts the map at a chosen logit (count-map, grade-bounds); false when the network has no
  // map bias frugal knows of (TorchScript modules), which then start where their author put them.
  virtual bool set_map_bias(double value) = 0;
  // Writes the network and frugal's metadata (JSON text) to `out`, a memory stream: the caller
  // writes the file itself, since torch's file writer throws from its destructor on a full disk.
  virtual void save(std::ostream& out, const std::string& meta_json) = 0;
};

// frugal's U-shaped network (unet_internal.h) in the model's memory format.
std::unique_ptr<Network> make_unet_network(int dims, int width, int depth, Normalization normalization,
                                           bool channels_last);

// A TorchScript module read from `path` (torch.jit.script or torch.jit.trace output): it must map
// a float32 batch [N, 1, spatial...] to a map of the same shape. Throws UserError naming the file
// when it cannot be read or does not map a probe batch of `shape` to the same shape. With `bytes`,
// the module is read from them (a checkpoint already read and verified) and `path` only names it.
std::unique_ptr<Network> load_scripted_network(const std::string& path, const Shape& shape,
                                               const std::string* bytes = nullptr);

// frugal's own checkpoint archive: the module's tensors (none for the classical strategies, which
// pass null) and the metadata JSON as the uint8 tensor "frugal.meta".
void save_archive(std::ostream& out, const std::string& meta_json, torch::nn::Module* module);

// The same U-shaped network with the weights of a checkpoint written by its save().
std::unique_ptr<Network> load_unet_network(torch::serialize::InputArchive& archive, int dims, int width, int depth,
                                           Normalization normalization, bool channels_last);

// A checkpoint of a TorchScript network holds frugal's metadata as this extra file, which is how
// a checkpoint tells which kind of network it holds.
constexpr const char* kScriptedMetaFile = "frugal_meta.json";

}  // namespace frugal::learn::internal
